#include "clients/cli/json_object.h"

#include <cstdint>

namespace bayline::cli {
namespace {

class Parser {
 public:
  explicit Parser(std::string_view s) : s_(s) {}

  std::optional<std::string> ParseObject(Record* out) {
    SkipBlanks();
    if (!Eat('{')) return Fail("expected '{' (each line must be one JSON object)");
    SkipBlanks();
    if (Eat('}')) return Trailing();
    int column = 0;
    while (true) {
      SkipBlanks();
      Field field;
      if (auto e = ParseString(&field.name)) return e;
      SkipBlanks();
      if (!Eat(':')) return Fail("expected ':' after a key");
      SkipBlanks();
      if (auto e = ParseValue(&field.value)) return e;
      if (out->Find(field.name)) return Fail("duplicate key \"" + field.name + "\"");
      field.column = ++column;
      out->fields.push_back(std::move(field));
      SkipBlanks();
      if (Eat(',')) continue;
      if (Eat('}')) return Trailing();
      return Fail("expected ',' or '}'");
    }
  }

 private:
  std::optional<std::string> Trailing() {
    SkipBlanks();
    if (i_ != s_.size()) return Fail("text after the closing '}'");
    return std::nullopt;
  }

  std::optional<std::string> ParseValue(Cell* cell) {
    if (i_ >= s_.size()) return Fail("missing value");
    char c = s_[i_];
    if (c == '"') {
      cell->kind = Cell::Kind::kText;
      return ParseString(&cell->text);
    }
    if (c == '{') return Fail("nested objects are not supported");
    if (c == '[') {
      cell->kind = Cell::Kind::kList;
      ++i_;
      SkipBlanks();
      if (Eat(']')) return std::nullopt;
      while (true) {
        SkipBlanks();
        std::string token;
        if (auto e = ParseNumberToken(&token)) return e;
        cell->items.push_back(std::move(token));
        SkipBlanks();
        if (Eat(',')) continue;
        if (Eat(']')) return std::nullopt;
        return Fail("expected ',' or ']' in an array (arrays hold numbers only)");
      }
    }
    for (std::string_view word : {"true", "false", "null"}) {
      if (s_.substr(i_, word.size()) == word) {
        i_ += word.size();
        cell->kind = word == "null" ? Cell::Kind::kNull : Cell::Kind::kBool;
        cell->text = std::string(word);
        return std::nullopt;
      }
    }
    cell->kind = Cell::Kind::kNumber;
    return ParseNumberToken(&cell->text);
  }

  std::optional<std::string> ParseNumberToken(std::string* token) {
    size_t start = i_;
    if (i_ < s_.size() && s_[i_] == '-') ++i_;
    size_t digits = i_;
    while (i_ < s_.size() && IsNumberChar(s_[i_])) ++i_;
    if (i_ == digits || s_[digits] < '0' || s_[digits] > '9') {
      i_ = start;
      return Fail("expected a number, string, true, false, null or array");
    }
    *token = std::string(s_.substr(start, i_ - start));
    return std::nullopt;
  }

  static bool IsNumberChar(char c) {
    return (c >= '0' && c <= '9') || c == '.' || c == 'e' || c == 'E' || c == '+' || c == '-';
  }

  std::optional<std::string> ParseString(std::string* out) {
    if (!Eat('"')) return Fail("expected a string in double quotes");
    while (i_ < s_.size()) {
      char c = s_[i_++];
      if (c == '"') return std::nullopt;
      if (c != '\\') {
        *out += c;
        continue;
      }
      if (i_ >= s_.size()) break;
      char e = s_[i_++];
      switch (e) {
        case '"':
          *out += '"';
          break;
        case '\\':
          *out += '\\';
          break;
        case '/':
          *out += '/';
          break;
        case 'b':
          *out += '\b';
          break;
        case 'f':
          *out += '\f';
          break;
        case 'n':
          *out += '\n';
          break;
        case 'r':
          *out += '\r';
          break;
        case 't':
          *out += '\t';
          break;
        case 'u': {
          if (auto err = ParseUnicodeEscape(out)) return err;
          break;
        }
        default:
          return Fail(std::string("invalid escape \\") + e);
      }
    }
    return Fail("unterminated string");
  }

  // \uXXXX (with surrogate pairs) appended as UTF-8.
  std::optional<std::string> ParseUnicodeEscape(std::string* out) {
    auto hex4 = [this](uint32_t* v) {
      if (i_ + 4 > s_.size()) return false;
      *v = 0;
      for (int k = 0; k < 4; ++k) {
        char h = s_[i_++];
        *v <<= 4;
        if (h >= '0' && h <= '9')
          *v |= h - '0';
        else if (h >= 'a' && h <= 'f')
          *v |= h - 'a' + 10;
        else if (h >= 'A' && h <= 'F')
          *v |= h - 'A' + 10;
        else
          return false;
      }
      return true;
    };
    uint32_t cp = 0;
    if (!hex4(&cp)) return Fail("invalid \\u escape");
    if (cp >= 0xD800 && cp < 0xDC00) {
      uint32_t low = 0;
      if (!Eat('\\') || !Eat('u') || !hex4(&low) || low < 0xDC00 || low > 0xDFFF) {
        return Fail("unpaired surrogate in \\u escape");
      }
      cp = 0x10000 + ((cp - 0xD800) << 10) + (low - 0xDC00);
    }
    if (cp < 0x80) {
      *out += static_cast<char>(cp);
    } else if (cp < 0x800) {
      *out += static_cast<char>(0xC0 | (cp >> 6));
      *out += static_cast<char>(0x80 | (cp & 0x3F));
    } else if (cp < 0x10000) {
      *out += static_cast<char>(0xE0 | (cp >> 12));
      *out += static_cast<char>(0x80 | ((cp >> 6) & 0x3F));
      *out += static_cast<char>(0x80 | (cp & 0x3F));
    } else {
      *out += static_cast<char>(0xF0 | (cp >> 18));
      *out += static_cast<char>(0x80 | ((cp >> 12) & 0x3F));
      *out += static_cast<char>(0x80 | ((cp >> 6) & 0x3F));
      *out += static_cast<char>(0x80 | (cp & 0x3F));
    }
    return std::nullopt;
  }

  void SkipBlanks() {
    while (i_ < s_.size() && (s_[i_] == ' ' || s_[i_] == '\t' || s_[i_] == '\r')) ++i_;
  }
  bool Eat(char c) {
    if (i_ < s_.size() && s_[i_] == c) {
      ++i_;
      return true;
    }
    return false;
  }
  std::string Fail(const std::string& what) const {
    return "character " + std::to_string(i_ + 1) + ": " + what;
  }

  std::string_view s_;
  size_t i_ = 0;
};

}  // namespace

std::optional<std::string> ParseJsonObjectLine(std::string_view line, Record* out) {
  out->fields.clear();
  return Parser(line).ParseObject(out);
}

}  // namespace bayline::cli

#include "clients/cli/json_line.h"

#include <google/protobuf/descriptor.h>
#include <google/protobuf/message.h>

#include <charconv>
#include <cmath>
#include <cstdint>
#include <string>

namespace bayline::cli {
namespace {

using google::protobuf::FieldDescriptor;
using google::protobuf::Message;
using google::protobuf::Reflection;

void AppendString(std::string& out, const std::string& s) {
  static constexpr char kHex[] = "0123456789abcdef";
  out.push_back('"');
  for (const char ch : s) {
    const auto c = static_cast<unsigned char>(ch);
    switch (c) {
      case '"':
        out += "\\\"";
        break;
      case '\\':
        out += "\\\\";
        break;
      case '\n':
        out += "\\n";
        break;
      case '\r':
        out += "\\r";
        break;
      case '\t':
        out += "\\t";
        break;
      case '\b':
        out += "\\b";
        break;
      case '\f':
        out += "\\f";
        break;
      default:
        if (c < 0x20) {
          out += "\\u00";
          out.push_back(kHex[c >> 4]);
          out.push_back(kHex[c & 0xf]);
        } else {
          out.push_back(ch);
        }
    }
  }
  out.push_back('"');
}

void AppendBase64(std::string& out, const std::string& bytes) {
  static constexpr char kAlphabet[] =
      "ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789+/";
  out.push_back('"');
  std::size_t i = 0;
  for (; i + 2 < bytes.size(); i += 3) {
    const uint32_t v = (uint32_t(uint8_t(bytes[i])) << 16) |
                       (uint32_t(uint8_t(bytes[i + 1])) << 8) | uint32_t(uint8_t(bytes[i + 2]));
    for (int shift = 18; shift >= 0; shift -= 6) out.push_back(kAlphabet[(v >> shift) & 63]);
  }
  const std::size_t rest = bytes.size() - i;
  if (rest > 0) {
    uint32_t v = uint32_t(uint8_t(bytes[i])) << 16;
    if (rest == 2) v |= uint32_t(uint8_t(bytes[i + 1])) << 8;
    out.push_back(kAlphabet[(v >> 18) & 63]);
    out.push_back(kAlphabet[(v >> 12) & 63]);
    out.push_back(rest == 2 ? kAlphabet[(v >> 6) & 63] : '=');
    out.push_back('=');
  }
  out.push_back('"');
}

template <typename T>
void AppendNumber(std::string& out, T v) {
  char buf[32];
  const auto result = std::to_chars(buf, buf + sizeof buf, v);
  out.append(buf, result.ptr);
}

template <typename T>
void AppendFloating(std::string& out, T v) {
  if (std::isnan(v)) {
    out += "\"NaN\"";
  } else if (std::isinf(v)) {
    out += v > 0 ? "\"Infinity\"" : "\"-Infinity\"";
  } else if (v == 0 && std::signbit(v)) {
    out += "-0.0";  // "-0" would read back as the integer 0, losing the sign
  } else {
    AppendNumber(out, v);  // shortest round-trip form
  }
}

template <typename T>
void AppendQuoted(std::string& out, T v) {
  out.push_back('"');
  AppendNumber(out, v);
  out.push_back('"');
}

void AppendMessage(std::string& out, const Message& message);

// One value of `field`: element `index` of a repeated field, or the singular value (index < 0).
void AppendValue(std::string& out, const Message& m, const FieldDescriptor* f, int index) {
  const Reflection* r = m.GetReflection();
  const bool rep = index >= 0;
  switch (f->cpp_type()) {
    case FieldDescriptor::CPPTYPE_INT32:
      AppendNumber(out, rep ? r->GetRepeatedInt32(m, f, index) : r->GetInt32(m, f));
      break;
    case FieldDescriptor::CPPTYPE_UINT32:
      AppendNumber(out, rep ? r->GetRepeatedUInt32(m, f, index) : r->GetUInt32(m, f));
      break;
    case FieldDescriptor::CPPTYPE_INT64:
      AppendQuoted(out, rep ? r->GetRepeatedInt64(m, f, index) : r->GetInt64(m, f));
      break;
    case FieldDescriptor::CPPTYPE_UINT64:
      AppendQuoted(out, rep ? r->GetRepeatedUInt64(m, f, index) : r->GetUInt64(m, f));
      break;
    case FieldDescriptor::CPPTYPE_DOUBLE:
      AppendFloating(out, rep ? r->GetRepeatedDouble(m, f, index) : r->GetDouble(m, f));
      break;
    case FieldDescriptor::CPPTYPE_FLOAT:
      AppendFloating(out, rep ? r->GetRepeatedFloat(m, f, index) : r->GetFloat(m, f));
      break;
    case FieldDescriptor::CPPTYPE_BOOL:
      out += (rep ? r->GetRepeatedBool(m, f, index) : r->GetBool(m, f)) ? "true" : "false";
      break;
    case FieldDescriptor::CPPTYPE_ENUM: {
      const int number = rep ? r->GetRepeatedEnumValue(m, f, index) : r->GetEnumValue(m, f);
      if (const auto* v = f->enum_type()->FindValueByNumber(number)) {
        AppendString(out, v->name());
      } else {
        AppendNumber(out, number);
      }
      break;
    }
    case FieldDescriptor::CPPTYPE_STRING: {
      std::string scratch;
      const std::string& s = rep ? r->GetRepeatedStringReference(m, f, index, &scratch)
                                 : r->GetStringReference(m, f, &scratch);
      if (f->type() == FieldDescriptor::TYPE_BYTES) {
        AppendBase64(out, s);
      } else {
        AppendString(out, s);
      }
      break;
    }
    case FieldDescriptor::CPPTYPE_MESSAGE:
      AppendMessage(out, rep ? r->GetRepeatedMessage(m, f, index) : r->GetMessage(m, f));
      break;
  }
}

// A map entry's key as JSON object key text.
void AppendMapKey(std::string& out, const Message& entry) {
  const FieldDescriptor* key = entry.GetDescriptor()->map_key();
  if (key->cpp_type() == FieldDescriptor::CPPTYPE_STRING) {
    AppendValue(out, entry, key, -1);
    return;
  }
  std::string text;
  if (key->cpp_type() == FieldDescriptor::CPPTYPE_BOOL) {
    text = entry.GetReflection()->GetBool(entry, key) ? "true" : "false";
  } else {
    AppendValue(text, entry, key, -1);  // 64-bit keys come out quoted already
    if (!text.empty() && text.front() == '"') text = text.substr(1, text.size() - 2);
  }
  out.push_back('"');
  out += text;
  out.push_back('"');
}

void AppendMessage(std::string& out, const Message& m) {
  const auto* descriptor = m.GetDescriptor();
  const Reflection* r = m.GetReflection();
  out.push_back('{');
  bool first = true;
  for (int i = 0; i < descriptor->field_count(); ++i) {
    const FieldDescriptor* f = descriptor->field(i);
    // Printed when set; fields without presence (proto3 scalars, repeated) always.
    if (!f->is_repeated() && f->has_presence() && !r->HasField(m, f)) continue;
    if (!first) out.push_back(',');
    first = false;
    AppendString(out, f->name());
    out.push_back(':');
    if (f->is_map()) {
      out.push_back('{');
      const int n = r->FieldSize(m, f);
      for (int k = 0; k < n; ++k) {
        if (k > 0) out.push_back(',');
        const Message& entry = r->GetRepeatedMessage(m, f, k);
        AppendMapKey(out, entry);
        out.push_back(':');
        AppendValue(out, entry, entry.GetDescriptor()->map_value(), -1);
      }
      out.push_back('}');
    } else if (f->is_repeated()) {
      out.push_back('[');
      const int n = r->FieldSize(m, f);
      for (int k = 0; k < n; ++k) {
        if (k > 0) out.push_back(',');
        AppendValue(out, m, f, k);
      }
      out.push_back(']');
    } else {
      AppendValue(out, m, f, -1);
    }
  }
  out.push_back('}');
}

}  // namespace

std::string ToJsonLine(const bayline::v1::Publication& publication) {
  std::string out;
  out.reserve(512);
  AppendMessage(out, publication);
  return out;
}

}  // namespace bayline::cli

#include "daemon/pipeline/glob.h"

#include <vector>

namespace bayline::pipeline {
namespace {

enum class TokenKind { kLiteral, kOne, kSegmentRun, kAnyRun, kAnyDirs };

struct Token {
  TokenKind kind;
  char literal = 0;
};

std::vector<Token> Tokenize(std::string_view p) {
  std::vector<Token> tokens;
  for (std::size_t i = 0; i < p.size(); ++i) {
    if (p[i] == '*') {
      if (i + 1 < p.size() && p[i + 1] == '*') {
        while (i + 1 < p.size() && p[i + 1] == '*') ++i;  // "***" reads as "**"
        if (i + 1 < p.size() && p[i + 1] == '/') {
          ++i;  // "**/": zero or more whole segments
          tokens.push_back({TokenKind::kAnyDirs});
        } else {
          tokens.push_back({TokenKind::kAnyRun});
        }
      } else {
        tokens.push_back({TokenKind::kSegmentRun});
      }
    } else if (p[i] == '?') {
      tokens.push_back({TokenKind::kOne});
    } else if (p[i] == '\\' && i + 1 < p.size()) {
      tokens.push_back({TokenKind::kLiteral, p[++i]});
    } else {
      tokens.push_back({TokenKind::kLiteral, p[i]});
    }
  }
  return tokens;
}

bool IsContinuationByte(char c) { return (static_cast<unsigned char>(c) & 0xC0) == 0x80; }

}  // namespace

bool GlobMatch(std::string_view pattern, std::string_view name) {
  const std::vector<Token> tokens = Tokenize(pattern);
  const std::size_t n = name.size();
  // next[j]: tokens[t + 1..] match name[j..]; cur[j]: tokens[t..] match name[j..].
  std::vector<char> next(n + 1, 0), cur(n + 1, 0);
  next[n] = 1;  // empty pattern matches the empty rest
  for (std::size_t t = tokens.size(); t-- > 0;) {
    const Token& tok = tokens[t];
    // kAnyDirs: some k >= j has name[k] == '/' and next[k + 1] (maintained from the right).
    bool slash_then_match = false;
    for (std::size_t j = n + 1; j-- > 0;) {
      bool m = false;
      switch (tok.kind) {
        case TokenKind::kLiteral:
          m = j < n && name[j] == tok.literal && next[j + 1];
          break;
        case TokenKind::kOne:
          if (j < n && name[j] != '/' && !IsContinuationByte(name[j])) {
            std::size_t k = j + 1;
            while (k < n && IsContinuationByte(name[k])) ++k;
            m = next[k];
          }
          break;
        case TokenKind::kSegmentRun:  // empty, or one non-'/' char then this token again
          m = next[j] || (j < n && name[j] != '/' && cur[j + 1]);
          break;
        case TokenKind::kAnyRun:
          m = next[j] || (j < n && cur[j + 1]);
          break;
        case TokenKind::kAnyDirs:  // empty, or any run ending in '/' (then the rest)
          if (j < n && name[j] == '/' && next[j + 1]) slash_then_match = true;
          m = next[j] || slash_then_match;
          break;
      }
      cur[j] = m ? 1 : 0;
    }
    next.swap(cur);
  }
  return next[0] != 0;
}

}  // namespace bayline::pipeline

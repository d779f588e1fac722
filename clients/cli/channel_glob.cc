#include "clients/cli/channel_glob.h"

#include <vector>

namespace bayline::cli {

bool GlobMatch(std::string_view glob, std::string_view name) {
  if (glob.empty()) return true;
  // Dynamic programming over suffixes: match[g][n] = glob[g..] matches name[n..]. O(|glob| |name|)
  // time, so no pattern can make it blow up.
  const size_t G = glob.size(), N = name.size();
  std::vector<char> match((G + 1) * (N + 1), 0);
  auto at = [N](size_t g, size_t n) { return g * (N + 1) + n; };
  match[at(G, N)] = 1;
  for (size_t g = G; g-- > 0;) {
    bool double_star = glob[g] == '*' && g + 1 < G && glob[g + 1] == '*';
    for (size_t n = N + 1; n-- > 0;) {
      bool m = false;
      if (double_star) {
        // '**' matches nothing, or one more character of any kind.
        m = match[at(g + 2, n)] || (n < N && match[at(g, n + 1)]);
      } else if (glob[g] == '*') {
        m = match[at(g + 1, n)] || (n < N && name[n] != '/' && match[at(g, n + 1)]);
      } else if (n < N && (glob[g] == name[n] || (glob[g] == '?' && name[n] != '/'))) {
        m = match[at(g + 1, n + 1)];
      }
      match[at(g, n)] = m;
    }
  }
  return match[at(0, 0)] != 0;
}

std::string LiteralPrefix(std::string_view glob) {
  size_t wildcard = glob.find_first_of("*?");
  return std::string(glob.substr(0, wildcard));
}

}  // namespace bayline::cli

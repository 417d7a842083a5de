#include "suggest.hpp"

#include <algorithm>
#include <limits>

namespace pulsewise::detail {

// Wagner-Fischer dynamic programme with the transposition step of Damerau's distance
// (restricted form); O(|a| |b|) time, fine for the short words of a circuit file.
std::size_t edit_distance(std::string_view a, std::string_view b) {
  const std::size_t n = a.size();
  const std::size_t m = b.size();
  std::vector<std::vector<std::size_t>> d(n + 1, std::vector<std::size_t>(m + 1, 0));
  for (std::size_t i = 0; i <= n; ++i) d[i][0] = i;
  for (std::size_t j = 0; j <= m; ++j) d[0][j] = j;
  for (std::size_t i = 1; i <= n; ++i) {
    for (std::size_t j = 1; j <= m; ++j) {
      const std::size_t cost = a[i - 1] == b[j - 1] ? 0 : 1;
      d[i][j] = std::min({d[i - 1][j] + 1, d[i][j - 1] + 1, d[i - 1][j - 1] + cost});
      if (i > 1 && j > 1 && a[i - 1] == b[j - 2] && a[i - 2] == b[j - 1]) {
        d[i][j] = std::min(d[i][j], d[i - 2][j - 2] + 1);
      }
    }
  }
  return d[n][m];
}

namespace {

std::size_t typo_budget(std::size_t length) {
  if (length <= 4) return 1;
  if (length <= 8) return 2;
  return 3;
}

}  // namespace

std::string closest_match(std::string_view word, const std::vector<std::string>& candidates) {
  std::size_t best = std::numeric_limits<std::size_t>::max();
  std::string match;
  for (const auto& candidate : candidates) {
    const std::size_t d = edit_distance(word, candidate);
    if (d < best) {
      best = d;
      match = candidate;
    }
  }
  if (match.empty() || best > typo_budget(std::max(word.size(), match.size()))) return {};
  return match;
}

std::string did_you_mean(std::string_view word, const std::vector<std::string>& candidates) {
  const std::string match = closest_match(word, candidates);
  return match.empty() ? std::string() : "did you mean '" + match + "'?";
}

}  // namespace pulsewise::detail

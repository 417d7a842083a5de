// "Did you mean ...?" suggestions for misspelt keys, gate names and signal names.
#pragma once

#include <string>
#include <string_view>
#include <vector>

namespace pulsewise::detail {

// Optimal string alignment distance (Levenshtein with adjacent transpositions): the number of
// single-character insertions, deletions, substitutions and swaps that turn a into b.
std::size_t edit_distance(std::string_view a, std::string_view b);

// The candidate closest to `word`, or "" when none is close enough to be a plausible typo
// (distance at most 1 for words up to 4 characters, 2 up to 8, 3 beyond).
std::string closest_match(std::string_view word, const std::vector<std::string>& candidates);

// " (did you mean 'x'?)"-style fix text: "did you mean 'x'?" or "" when nothing is close.
std::string did_you_mean(std::string_view word, const std::vector<std::string>& candidates);

}  // namespace pulsewise::detail

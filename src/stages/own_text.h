// own_text: the part of one side of a pair that is evidence of its language.
//
// Real translations carry text that belongs to no language: spans copied
// from the other side (identifiers, product names, option names, numbers),
// format placeholders, markup and addresses. The script and language stages
// judge a side by what is left once these are taken out:
//   - anything between '<' and the next '>' (tags and <metavariables>; at
//     most 200 bytes, no '<' inside), and entities (&name; &#NN; &#xHH;);
//   - printf conversions (%s, %1$s, %-20.127s, %lu, %%), brace and template
//     variables ({0}, {name}, {{name}}), shell variables ($HOME, ${HOME});
//   - white-space-separated tokens that are URLs (scheme://, www.), e-mail
//     addresses (a '@' with a '.' after it) or options (-x, --name);
//   - words (runs of letters, digits and '_') that hold a digit; that are
//     identifiers or names written in camel case (GSeekType, PostScript);
//     that are acronyms or metavariables (two or more ASCII capitals and no
//     other letter: GID, FILE); that are menu accelerators (one letter with
//     '_': _F); or that also occur as words of the other side, or whose
//     '_'-separated parts all do (ASCII letters compared without case; '_'
//     itself is ignored).
// What remains are the side's own words, separated by single spaces, and the
// number of letters in them. Pure function; thread-safe (per-thread scratch).
#pragma once

#include <cstddef>
#include <string>
#include <string_view>

namespace sheaf {

// Writes the own words of `side` (judged against `other`) to `out`, replacing
// its contents; returns the number of letters (general category L*) in them.
size_t own_text(std::string_view side, std::string_view other, std::string& out);
// Both sides' own texts at once (each side read once): out[0] and letters[0]
// for the source, out[1] and letters[1] for the target.
void own_texts(std::string_view source, std::string_view target, std::string out[2], size_t letters[2]);

// How much of `side` is copied from `other`: its words with letters (outside
// markup, placeholders and skipped tokens, without digits, and without
// acronyms in capitals unless the whole side is in capitals), and how many
// of them also occur in `other` (compared as own_text compares them).
struct WordShare {
  size_t words = 0, shared = 0;
};
WordShare shared_words(std::string_view side, std::string_view other);

}  // namespace sheaf

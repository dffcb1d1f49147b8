// markup: finds HTML markup in one side's text, so that the pattern stage can
// take it out of both sides alike.
//
// A tag is markup only when its name is an HTML element name (the element
// index of the WHATWG HTML standard, plus the obsolete big, center, font,
// strike and tt that Pango markup and old pages still use; list written
// from the standard, kept in markup.cc) and it is used as markup: a closing
// tag; an opening tag with attributes or written self-closing ("<br/>");
// <br>, <hr> or <wbr>; or a bare opening tag closed later on the same side.
// So command-line metavariables stay text: "<directory>", "<name>" (not
// element names) and a lone "<link>" or "<source>" (element names, used as
// placeholders: no attributes, never closed).
// Entities are the five XML ones (&lt; &gt; &amp; &quot; &apos;), &nbsp;
// and numeric references (&#NN; &#xHH;), decoded to their characters.
#pragma once

#include <string>
#include <string_view>
#include <vector>

namespace sheaf {

struct MarkupTag {
  size_t begin = 0, end = 0;  // byte span of the tag in the text
  std::string key;            // lowercase element name, "/" first for a closing tag
};

// The markup tags of `text`, in order.
std::vector<MarkupTag> find_markup(std::string_view text);

// `text` with the spans of `tags` replaced by one space each and entities
// decoded (spaces are not collapsed here). Returns the number of entities
// decoded in *entities when given.
std::string remove_markup(std::string_view text, const std::vector<MarkupTag>& tags, size_t* entities = nullptr);

}  // namespace sheaf

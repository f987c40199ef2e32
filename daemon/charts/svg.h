// File: daemon/charts/svg.h
//
// A tiny writer of SVG (XML) text for the chart module: elements, attributes
// and text, every attribute value and every text escaped on the way in, so
// no caller string (a feature name, a set name) can break the markup.
// Text is also made valid XML 1.0: bytes that are not UTF-8 and characters
// XML forbids (control characters other than tab, newline and carriage
// return; U+FFFE, U+FFFF) become U+FFFD.
//
//   SvgWriter w;
//   w.Open("svg", {{"xmlns", "http://www.w3.org/2000/svg"}});
//   w.TextElement("title", {}, "PSI of <rainfall_mm> & co");
//   w.Leaf("rect", {{"x", "0"}, {"width", "10"}});
//   w.Close();
//   std::string svg = std::move(w).Release();
//
// Thread-compatible: one writer per thread; the free functions are pure.
#ifndef PLUMBLINE_DAEMON_CHARTS_SVG_H_
#define PLUMBLINE_DAEMON_CHARTS_SVG_H_

#include <cstddef>
#include <initializer_list>
#include <string>
#include <utility>
#include <vector>

#include "absl/strings/string_view.h"

namespace plumbline::charts {

// Attribute name and (unescaped) value. Values may point into temporaries
// of the calling expression: the writer copies them before returning.
using SvgAttribute = std::pair<absl::string_view, absl::string_view>;
using SvgAttributes = std::initializer_list<SvgAttribute>;

// The text as valid XML 1.0 UTF-8 (see the file comment), unescaped.
std::string SanitizeUtf8(absl::string_view text);

// The text sanitised and escaped for element content or a double-quoted
// attribute value: & < > " ' become entities; in attributes tab, newline
// and carriage return become character references so parsers keep them.
std::string EscapeText(absl::string_view text);
std::string EscapeAttribute(absl::string_view text);

// The sanitised text cut to at most max_chars characters (code points), the
// last of which is then an ellipsis (U+2026). REQUIRES: max_chars >= 1.
std::string Ellipsize(absl::string_view text, size_t max_chars);

// Number of characters (code points) of the sanitised text.
size_t CharCount(absl::string_view text);

class SvgWriter {
 public:
  SvgWriter() = default;
  SvgWriter(const SvgWriter&) = delete;
  SvgWriter& operator=(const SvgWriter&) = delete;

  // <tag a="v" ...> ; Close() writes the matching end tag.
  // REQUIRES: tag and attribute names are XML names (our constants).
  void Open(absl::string_view tag, SvgAttributes attributes = {});
  // The same with attributes built at run time.
  void Open(absl::string_view tag, const std::vector<SvgAttribute>& attributes);
  // <tag a="v" ... />
  void Leaf(absl::string_view tag, SvgAttributes attributes = {});
  void Leaf(absl::string_view tag, const std::vector<SvgAttribute>& attributes);
  // <tag a="v" ...>escaped text</tag>
  void TextElement(absl::string_view tag, SvgAttributes attributes,
                   absl::string_view text);
  void TextElement(absl::string_view tag,
                   const std::vector<SvgAttribute>& attributes,
                   absl::string_view text);
  // <tag a="v" ...>escaped text<title>escaped tooltip</title></tag>, all on
  // one line so no white space enters the text: text shown cut short with
  // its full version as tooltip and accessible name.
  void TextWithTooltip(absl::string_view tag,
                       const std::vector<SvgAttribute>& attributes,
                       absl::string_view text, absl::string_view tooltip);
  // Ends the innermost open element. REQUIRES: an element is open.
  void Close();

  // Elements opened and not yet closed.
  size_t depth() const { return open_.size(); }

  // The document. REQUIRES: depth() == 0.
  std::string Release() &&;

 private:
  template <typename Range>
  void StartTag(absl::string_view tag, const Range& attributes);

  std::string out_;
  std::vector<std::string> open_;
};

}  // namespace plumbline::charts

#endif  // PLUMBLINE_DAEMON_CHARTS_SVG_H_

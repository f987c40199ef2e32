#include "daemon/charts/svg.h"

#include <cassert>
#include <cstdint>

#include "absl/strings/str_cat.h"

namespace plumbline::charts {
namespace {

constexpr char kReplacement[] = "\xEF\xBF\xBD";  // U+FFFD in UTF-8

// Decodes one UTF-8 sequence at text[*pos]. Returns the code point and
// advances *pos, or returns -1 (and skips one byte) for an ill-formed
// sequence: overlong forms, surrogates and values above U+10FFFF included
// (Unicode 15, table 3-7, "well-formed UTF-8 byte sequences").
int32_t DecodeOne(absl::string_view text, size_t* pos) {
  const auto byte = [&](size_t i) {
    return static_cast<uint8_t>(text[*pos + i]);
  };
  const size_t left = text.size() - *pos;
  const uint8_t b0 = byte(0);
  if (b0 < 0x80) {
    ++*pos;
    return b0;
  }
  size_t length = 0;
  int32_t cp = 0;
  uint8_t lo = 0x80, hi = 0xBF;  // allowed range of the second byte
  if (b0 >= 0xC2 && b0 <= 0xDF) {
    length = 2;
    cp = b0 & 0x1F;
  } else if (b0 >= 0xE0 && b0 <= 0xEF) {
    length = 3;
    cp = b0 & 0x0F;
    if (b0 == 0xE0) lo = 0xA0;
    if (b0 == 0xED) hi = 0x9F;
  } else if (b0 >= 0xF0 && b0 <= 0xF4) {
    length = 4;
    cp = b0 & 0x07;
    if (b0 == 0xF0) lo = 0x90;
    if (b0 == 0xF4) hi = 0x8F;
  } else {
    ++*pos;
    return -1;
  }
  if (left < length || byte(1) < lo || byte(1) > hi) {
    ++*pos;
    return -1;
  }
  for (size_t i = 1; i < length; ++i) {
    if (byte(i) < 0x80 || byte(i) > 0xBF) {
      ++*pos;
      return -1;
    }
    cp = (cp << 6) | (byte(i) & 0x3F);
  }
  *pos += length;
  return cp;
}

bool AllowedInXml(int32_t cp) {
  if (cp < 0) return false;
  if (cp < 0x20) return cp == 0x09 || cp == 0x0A || cp == 0x0D;
  return cp != 0xFFFE && cp != 0xFFFF;
}

// Calls emit(code point, its bytes) for each character of the sanitised
// text; replaced characters come as (0xFFFD, kReplacement).
template <typename Emit>
void ForEachChar(absl::string_view text, Emit emit) {
  size_t pos = 0;
  while (pos < text.size()) {
    const size_t start = pos;
    const int32_t cp = DecodeOne(text, &pos);
    if (AllowedInXml(cp)) {
      emit(cp, text.substr(start, pos - start));
    } else {
      emit(0xFFFD, absl::string_view(kReplacement));
    }
  }
}

std::string Escape(absl::string_view text, bool attribute) {
  std::string out;
  out.reserve(text.size());
  ForEachChar(text, [&](int32_t cp, absl::string_view bytes) {
    switch (cp) {
      case '&':
        out += "&amp;";
        break;
      case '<':
        out += "&lt;";
        break;
      case '>':
        out += "&gt;";
        break;
      case '"':
        out += "&quot;";
        break;
      case '\'':
        out += "&apos;";
        break;
      case '\t':
        out += attribute ? "&#9;" : "\t";
        break;
      case '\n':
        out += attribute ? "&#10;" : "\n";
        break;
      case '\r':
        out += "&#13;";
        break;  // parsers fold a raw CR in text too
      default:
        absl::StrAppend(&out, bytes);
    }
  });
  return out;
}

}  // namespace

std::string SanitizeUtf8(absl::string_view text) {
  std::string out;
  out.reserve(text.size());
  ForEachChar(text, [&](int32_t, absl::string_view bytes) {
    absl::StrAppend(&out, bytes);
  });
  return out;
}

std::string EscapeText(absl::string_view text) { return Escape(text, false); }

std::string EscapeAttribute(absl::string_view text) {
  return Escape(text, true);
}

size_t CharCount(absl::string_view text) {
  size_t n = 0;
  ForEachChar(text, [&](int32_t, absl::string_view) { ++n; });
  return n;
}

std::string Ellipsize(absl::string_view text, size_t max_chars) {
  assert(max_chars >= 1);
  if (CharCount(text) <= max_chars) return SanitizeUtf8(text);
  std::string out;
  size_t n = 0;
  ForEachChar(text, [&](int32_t, absl::string_view bytes) {
    if (n++ < max_chars - 1) absl::StrAppend(&out, bytes);
  });
  // Trailing blanks before the ellipsis read as a gap; drop them.
  while (!out.empty() && (out.back() == ' ' || out.back() == '\t')) {
    out.pop_back();
  }
  return out + "\xE2\x80\xA6";  // U+2026 HORIZONTAL ELLIPSIS
}

template <typename Range>
void SvgWriter::StartTag(absl::string_view tag, const Range& attributes) {
  absl::StrAppend(&out_, "<", tag);
  for (const SvgAttribute& a : attributes) {
    absl::StrAppend(&out_, " ", a.first, "=\"", EscapeAttribute(a.second),
                    "\"");
  }
}

void SvgWriter::Open(absl::string_view tag, SvgAttributes attributes) {
  StartTag(tag, attributes);
  out_ += ">\n";
  open_.emplace_back(tag);
}

void SvgWriter::Open(absl::string_view tag,
                     const std::vector<SvgAttribute>& attributes) {
  StartTag(tag, attributes);
  out_ += ">\n";
  open_.emplace_back(tag);
}

void SvgWriter::Leaf(absl::string_view tag, SvgAttributes attributes) {
  StartTag(tag, attributes);
  out_ += "/>\n";
}

void SvgWriter::Leaf(absl::string_view tag,
                     const std::vector<SvgAttribute>& attributes) {
  StartTag(tag, attributes);
  out_ += "/>\n";
}

void SvgWriter::TextElement(absl::string_view tag, SvgAttributes attributes,
                            absl::string_view text) {
  StartTag(tag, attributes);
  absl::StrAppend(&out_, ">", EscapeText(text), "</", tag, ">\n");
}

void SvgWriter::TextElement(absl::string_view tag,
                            const std::vector<SvgAttribute>& attributes,
                            absl::string_view text) {
  StartTag(tag, attributes);
  absl::StrAppend(&out_, ">", EscapeText(text), "</", tag, ">\n");
}

void SvgWriter::TextWithTooltip(absl::string_view tag,
                                const std::vector<SvgAttribute>& attributes,
                                absl::string_view text,
                                absl::string_view tooltip) {
  StartTag(tag, attributes);
  absl::StrAppend(&out_, ">", EscapeText(text), "<title>", EscapeText(tooltip),
                  "</title></", tag, ">\n");
}

void SvgWriter::Close() {
  assert(!open_.empty());
  absl::StrAppend(&out_, "</", open_.back(), ">\n");
  open_.pop_back();
}

std::string SvgWriter::Release() && {
  assert(open_.empty());
  return std::move(out_);
}

}  // namespace plumbline::charts

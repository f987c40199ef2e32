// File: daemon/util/caller_text.cc
#include "daemon/util/caller_text.h"

#include <cstdint>

#include "absl/strings/str_cat.h"
#include "absl/strings/str_format.h"

namespace plumbline::daemon {
namespace {

bool IsControl(unsigned char c) { return c < 0x20 || c == 0x7f; }

}  // namespace

size_t Utf8CharLength(absl::string_view text, size_t i) {
  const auto byte = [&](size_t k) { return static_cast<uint8_t>(text[k]); };
  const uint8_t lead = byte(i);
  if (lead < 0x80) return 1;
  size_t length = 0;
  uint32_t code = 0;
  if (lead >= 0xC2 && lead <= 0xDF) {
    length = 2;
    code = lead & 0x1Fu;
  } else if (lead >= 0xE0 && lead <= 0xEF) {
    length = 3;
    code = lead & 0x0Fu;
  } else if (lead >= 0xF0 && lead <= 0xF4) {
    length = 4;
    code = lead & 0x07u;
  } else {
    return 0;
  }
  if (i + length > text.size()) return 0;
  for (size_t k = 1; k < length; ++k) {
    if ((byte(i + k) & 0xC0u) != 0x80u) return 0;
    code = (code << 6) | (byte(i + k) & 0x3Fu);
  }
  // Overlong forms, surrogates and code points past U+10FFFF.
  if ((length == 3 && code < 0x800) || (length == 4 && code < 0x10000) ||
      (code >= 0xD800 && code <= 0xDFFF) || code > 0x10FFFF) {
    return 0;
  }
  return length;
}

std::string CallerText(absl::string_view text, size_t max_bytes) {
  std::string out;
  size_t i = 0;
  while (i < text.size()) {
    const unsigned char c = static_cast<unsigned char>(text[i]);
    const size_t length = IsControl(c) ? 0 : Utf8CharLength(text, i);
    const size_t taken = length == 0 ? 1 : length;
    if (i + taken > max_bytes) break;
    if (length == 0) {
      absl::StrAppendFormat(&out, "\\x%02x", c);
    } else {
      out.append(text.data() + i, length);
    }
    i += taken;
  }
  if (i < text.size()) absl::StrAppend(&out, "...(", text.size(), " bytes)");
  return out;
}

std::optional<size_t> FirstUnprintable(absl::string_view text) {
  size_t i = 0;
  while (i < text.size()) {
    const unsigned char c = static_cast<unsigned char>(text[i]);
    const size_t length = IsControl(c) ? 0 : Utf8CharLength(text, i);
    if (length == 0) return i;
    i += length;
  }
  return std::nullopt;
}

}  // namespace plumbline::daemon

// File: daemon/util/json_text.cc
#include "daemon/util/json_text.h"

#include <charconv>
#include <cmath>

namespace plumbline::daemon {

void AppendJsonString(absl::string_view text, std::string* out) {
  static constexpr char kHex[] = "0123456789abcdef";
  out->push_back('"');
  size_t run = 0;  // start of the bytes not yet copied
  for (size_t i = 0; i < text.size(); ++i) {
    const auto c = static_cast<unsigned char>(text[i]);
    if (c >= 0x20 && c != '"' && c != '\\') continue;
    out->append(text.data() + run, i - run);
    run = i + 1;
    switch (c) {
      case '"':
        out->append("\\\"");
        break;
      case '\\':
        out->append("\\\\");
        break;
      case '\n':
        out->append("\\n");
        break;
      case '\r':
        out->append("\\r");
        break;
      case '\t':
        out->append("\\t");
        break;
      case '\b':
        out->append("\\b");
        break;
      case '\f':
        out->append("\\f");
        break;
      default:
        out->append("\\u00");
        out->push_back(kHex[c >> 4]);
        out->push_back(kHex[c & 0xf]);
        break;
    }
  }
  out->append(text.data() + run, text.size() - run);
  out->push_back('"');
}

void AppendJsonNumber(double x, std::string* out) {
  if (!std::isfinite(x)) {
    out->append("null");
    return;
  }
  char buffer[32];  // the shortest form of a double needs at most 24
  const std::to_chars_result r =
      std::to_chars(buffer, buffer + sizeof buffer, x);
  out->append(buffer, r.ptr);
}

}  // namespace plumbline::daemon

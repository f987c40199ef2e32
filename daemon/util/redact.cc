// File: daemon/util/redact.cc
#include "daemon/util/redact.h"

#include "absl/strings/ascii.h"
#include "absl/strings/str_cat.h"

namespace plumbline::daemon {
namespace {

constexpr absl::string_view kMasked = "[masked]";

}  // namespace

bool MayHoldSecret(absl::string_view text) {
  return text.find(kTokenPrefix) != absl::string_view::npos ||
         absl::AsciiStrToLower(text).find("bearer") != std::string::npos;
}

std::string MaskSecrets(absl::string_view text) {
  const std::string lower = absl::AsciiStrToLower(text);
  const absl::string_view prefix = kTokenPrefix;
  std::string out;
  size_t i = 0;
  while (i < text.size()) {
    // A token: keep "plb_<id>_", mask the rest of the word.
    if (text.substr(i, prefix.size()) == prefix) {
      size_t j = i + prefix.size();
      while (j < text.size() && absl::ascii_isalnum(text[j])) ++j;
      absl::StrAppend(&out, text.substr(i, j - i));
      if (j < text.size() && text[j] == '_') {
        size_t end = j + 1;
        while (end < text.size() && absl::ascii_isalnum(text[end])) ++end;
        absl::StrAppend(&out, "_", kMasked);
        j = end;
      }
      i = j;
      continue;
    }
    // "Bearer <credential>": mask the credential.
    if (lower.compare(i, 7, "bearer ") == 0) {
      size_t j = i + 7;
      while (j < text.size() && text[j] == ' ') ++j;
      size_t end = j;
      while (end < text.size() && !absl::ascii_isspace(text[end]) &&
             text[end] != '"' && text[end] != ',') {
        ++end;
      }
      absl::StrAppend(&out, text.substr(i, j - i), end > j ? kMasked : "");
      i = end;
      continue;
    }
    out.push_back(text[i]);
    ++i;
  }
  return out;
}

}  // namespace plumbline::daemon

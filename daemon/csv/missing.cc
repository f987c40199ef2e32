// File: daemon/csv/missing.cc
#include "daemon/csv/missing.h"

#include <algorithm>

#include "absl/status/status.h"
#include "absl/strings/ascii.h"
#include "absl/strings/str_cat.h"
#include "absl/strings/str_split.h"

namespace plumbline::daemon {

absl::StatusOr<MissingCells> MissingCells::Parse(absl::string_view text) {
  MissingCells cells;
  if (absl::StripAsciiWhitespace(text).empty()) return cells;
  for (absl::string_view part : absl::StrSplit(text, ',')) {
    part = absl::StripAsciiWhitespace(part);
    if (part.empty()) {
      return absl::InvalidArgumentError(absl::StrCat(
          "--na '", text,
          "': an empty token; blank cells are missing values anyway"));
    }
    if (cells.set_.insert(std::string(part)).second) {
      cells.tokens_.emplace_back(part);
    }
  }
  return cells;
}

bool MissingCells::IsMissing(absl::string_view cell) const {
  cell = absl::StripAsciiWhitespace(cell);
  return cell.empty() || (!set_.empty() && set_.contains(cell));
}

std::string ListFirst(const std::vector<std::string>& items, bool quote,
                      size_t shown) {
  std::string text;
  const size_t n = std::min(shown, items.size());
  for (size_t i = 0; i < n; ++i) {
    if (i > 0) text += ", ";
    if (quote) {
      absl::StrAppend(&text, "'", items[i], "'");
    } else {
      text += items[i];
    }
  }
  if (items.size() > n) {
    absl::StrAppend(&text, " \xE2\x80\xA6 and ", items.size() - n, " more");
  }
  return text;
}

}  // namespace plumbline::daemon

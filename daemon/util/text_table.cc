#include "daemon/util/text_table.h"

#include <algorithm>

#include "absl/strings/str_cat.h"
#include "absl/strings/str_split.h"

namespace plumbline::daemon {

std::string FormatTable(const std::vector<std::vector<std::string>>& rows,
                        absl::string_view indent) {
  std::vector<size_t> widths;
  for (const auto& row : rows) {
    if (widths.size() < row.size()) widths.resize(row.size(), 0);
    for (size_t c = 0; c < row.size(); ++c) {
      widths[c] = std::max(widths[c], row[c].size());
    }
  }
  std::string out;
  for (const auto& row : rows) {
    std::string line(indent);
    for (size_t c = 0; c < row.size(); ++c) {
      line += row[c];
      if (c + 1 < row.size()) line.append(widths[c] - row[c].size() + 2, ' ');
    }
    while (!line.empty() && line.back() == ' ') line.pop_back();
    absl::StrAppend(&out, line, "\n");
  }
  return out;
}

std::string WrapText(absl::string_view text, size_t width,
                     absl::string_view indent) {
  std::string out;
  for (absl::string_view paragraph : absl::StrSplit(text, '\n')) {
    std::string line(indent);
    bool empty = true;
    for (absl::string_view word :
         absl::StrSplit(paragraph, ' ', absl::SkipEmpty())) {
      if (!empty && line.size() + 1 + word.size() > width) {
        absl::StrAppend(&out, line, "\n");
        line = std::string(indent);
        empty = true;
      }
      absl::StrAppend(&line, empty ? "" : " ", word);
      empty = false;
    }
    absl::StrAppend(&out, empty ? std::string() : line, "\n");
  }
  return out;
}

}  // namespace plumbline::daemon

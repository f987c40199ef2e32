// File: daemon/csv/missing.h
//
// Which CSV cells are missing values, one rule for plumbctl's `fit` and
// `score --csv`: a cell that is blank (spaces and tabs only) or, with its
// surrounding blanks trimmed, equal to one of the tokens given with --na
// (case-sensitive). With no tokens only blank cells are missing.
//
//   absl::StatusOr<MissingCells> na = MissingCells::Parse("NA,n/a");
//   na->IsMissing(" NA ");  // true
//   na->IsMissing("na");    // false
//
// Also: ListFirst, the way an error lists many values.
//
// Thread-safe: immutable after construction.
#ifndef PLUMBLINE_DAEMON_CSV_MISSING_H_
#define PLUMBLINE_DAEMON_CSV_MISSING_H_

#include <string>
#include <vector>

#include "absl/container/flat_hash_set.h"
#include "absl/status/statusor.h"
#include "absl/strings/string_view.h"

namespace plumbline::daemon {

class MissingCells {
 public:
  // Blank cells only.
  MissingCells() = default;

  // Tokens from "NA,n/a,-" (blanks around each dropped). INVALID_ARGUMENT
  // naming --na for an empty token between commas ("NA,,-"): a blank cell is
  // missing anyway, so it is almost surely a typo.
  static absl::StatusOr<MissingCells> Parse(absl::string_view text);

  bool IsMissing(absl::string_view cell) const;

  const std::vector<std::string>& tokens() const { return tokens_; }

 private:
  std::vector<std::string> tokens_;
  absl::flat_hash_set<std::string> set_;
};

// "'a', 'b', 'c'" for at most `shown` items; more get "… and N more":
// "'a', 'b', 'c', 'd', 'e' … and 12 more". `quote` wraps each item in '…'.
std::string ListFirst(const std::vector<std::string>& items, bool quote = true,
                      size_t shown = 5);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_CSV_MISSING_H_

// File: scorer/coefficient_set.h
//
// Reading and validating coefficient-set files. A set file is the JSON form
// of plumbline.v1.CoefficientSet (proto/plumbline/v1/coefficient_set.proto);
// unknown fields are rejected. Every error names the source (usually the file
// path) and the field path in the form the file uses, for example
//
//   sets/courier.json: features[2].numeric.scale: must be > 0, got 0
//
// Called by the daemon's set registry and by plumbctl.
// Thread-safe: free functions without shared state.
#ifndef PLUMBLINE_SCORER_COEFFICIENT_SET_H_
#define PLUMBLINE_SCORER_COEFFICIENT_SET_H_

#include <cstddef>
#include <string>

#include "absl/status/status.h"
#include "absl/status/statusor.h"
#include "absl/strings/string_view.h"
#include "plumbline/v1/coefficient_set.pb.h"

namespace plumbline::scorer {

// Parses JSON text into a set and validates it. `source` names the text in
// error messages (a file path, "request"). Returns INVALID_ARGUMENT for
// malformed JSON, unknown fields and failed validation.
absl::StatusOr<v1::CoefficientSet> ParseCoefficientSet(
    absl::string_view json, absl::string_view source);

// Reads and parses a set file. NOT_FOUND if it cannot be opened.
absl::StatusOr<v1::CoefficientSet> ReadCoefficientSetFile(
    const std::string& path);

// Longest version string accepted (Plumbline's choice, no source: a
// version is a label such as "2026-12-01.1" or a refit's timestamp).
inline constexpr size_t kMaxVersionBytes = 128;

// Text from a caller or a file quoted in an error message: at most 64 bytes
// of it (then "...(N bytes)"), bytes outside printable ASCII as \xNN. The
// daemon quotes with its own CallerText (daemon/util/caller_text.h), which
// keeps valid UTF-8 letters; the scorer, below the daemon, uses this.
std::string ShownText(absl::string_view text);

// Checks everything the scorer relies on: a name and a printable version
// (no control characters, at most kMaxVersionBytes), finite
// numbers, unique printable feature names, scale > 0, ordered clip bounds,
// strictly increasing bin edges with one coefficient per bin, non-empty unique
// levels, missing rules that fit their transform, well-formed baselines.
absl::Status ValidateCoefficientSet(const v1::CoefficientSet& set,
                                    absl::string_view source);

// Writes a set as JSON (proto field names, two-space indent).
absl::StatusOr<std::string> CoefficientSetToJson(const v1::CoefficientSet& set);

}  // namespace plumbline::scorer

#endif  // PLUMBLINE_SCORER_COEFFICIENT_SET_H_

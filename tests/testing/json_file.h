// File: tests/testing/json_file.h
//
// Reads the JSON files that the reference scripts under tests/ write (output
// of scikit-learn, SciPy, statsmodels) into a google.protobuf.Struct, and
// pulls lists of numbers out of it. Test-only helpers.
#ifndef PLUMBLINE_TESTS_TESTING_JSON_FILE_H_
#define PLUMBLINE_TESTS_TESTING_JSON_FILE_H_

#include <string>
#include <vector>

#include "absl/status/statusor.h"
#include "absl/strings/string_view.h"
#include "google/protobuf/struct.pb.h"

namespace plumbline::testing {

// Parses the JSON object in `path`.
absl::StatusOr<google::protobuf::Struct> ReadJsonFile(const std::string& path);

// The list of numbers under `key`; INVALID_ARGUMENT if absent or not numbers.
absl::StatusOr<std::vector<double>> NumberList(
    const google::protobuf::Struct& object, absl::string_view key);

// Path of a reference file given to a test: the environment variable `name`.
// Fails the calling test (returns "") when it is unset.
std::string ReferencePathFromEnv(const char* name);

}  // namespace plumbline::testing

#endif  // PLUMBLINE_TESTS_TESTING_JSON_FILE_H_

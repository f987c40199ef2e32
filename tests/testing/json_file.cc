#include "tests/testing/json_file.h"

#include <cstdlib>
#include <fstream>
#include <sstream>

#include "absl/status/status.h"
#include "absl/strings/str_cat.h"
#include "google/protobuf/util/json_util.h"
#include "gtest/gtest.h"

namespace plumbline::testing {

absl::StatusOr<google::protobuf::Struct> ReadJsonFile(const std::string& path) {
  std::ifstream in(path);
  if (!in) return absl::NotFoundError(absl::StrCat(path, ": cannot open"));
  std::ostringstream text;
  text << in.rdbuf();
  google::protobuf::Struct object;
  const auto st =
      google::protobuf::util::JsonStringToMessage(text.str(), &object);
  if (!st.ok()) {
    return absl::InvalidArgumentError(
        absl::StrCat(path, ": ", st.message().as_string()));
  }
  return object;
}

absl::StatusOr<std::vector<double>> NumberList(
    const google::protobuf::Struct& object, absl::string_view key) {
  auto it = object.fields().find(std::string(key));
  if (it == object.fields().end() || !it->second.has_list_value()) {
    return absl::InvalidArgumentError(absl::StrCat("no list \"", key, "\""));
  }
  std::vector<double> out;
  for (const auto& v : it->second.list_value().values()) {
    if (v.kind_case() != google::protobuf::Value::kNumberValue) {
      return absl::InvalidArgumentError(
          absl::StrCat("\"", key, "\" holds a non-number"));
    }
    out.push_back(v.number_value());
  }
  return out;
}

std::string ReferencePathFromEnv(const char* name) {
  const char* path = std::getenv(name);
  if (path == nullptr) {
    ADD_FAILURE() << "environment variable " << name
                  << " is not set; run this test through ctest";
    return "";
  }
  return path;
}

}  // namespace plumbline::testing

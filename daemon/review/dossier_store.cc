// File: daemon/review/dossier_store.cc
#include "daemon/review/dossier_store.h"

#include <algorithm>
#include <filesystem>
#include <system_error>

#include "absl/strings/match.h"
#include "absl/strings/numbers.h"
#include "absl/strings/str_cat.h"
#include "absl/strings/strip.h"
#include "daemon/scoring/core.h"
#include "daemon/util/files.h"
#include "google/protobuf/util/json_util.h"

namespace plumbline::daemon {
namespace {

// Set names are [A-Za-z0-9_.-]+ (CheckSetName); "." and ".." would leave
// the root.
absl::Status CheckDirectoryName(absl::string_view set) {
  if (absl::Status s = CheckSetName(std::string(set)); !s.ok()) return s;
  if (set == "." || set == "..") {
    return absl::InvalidArgumentError(
        absl::StrCat("set name '", set, "' cannot name a dossier directory"));
  }
  return absl::OkStatus();
}

}  // namespace

std::string DossierStore::Path(absl::string_view set, int64_t job,
                               absl::string_view ext) const {
  return absl::StrCat(root_, "/", set, "/job-", job, ext);
}

std::string DossierStore::HtmlPath(absl::string_view set, int64_t job) const {
  return Path(set, job, ".html");
}

absl::Status DossierStore::Write(const v1::Dossier& dossier,
                                 absl::string_view html) const {
  if (absl::Status s = CheckDirectoryName(dossier.set()); !s.ok()) return s;
  std::error_code ec;
  const std::string dir = absl::StrCat(root_, "/", dossier.set());
  std::filesystem::create_directories(dir, ec);
  if (ec) {
    return absl::UnavailableError(absl::StrCat(
        "dossier directory ", dir, ": cannot create: ", ec.message()));
  }
  google::protobuf::util::JsonPrintOptions options;
  options.preserve_proto_field_names = true;
  std::string json;
  if (!google::protobuf::util::MessageToJsonString(dossier, &json, options)
           .ok()) {
    return absl::InternalError(absl::StrCat("dossier of set ", dossier.set(),
                                            " job ", dossier.job(),
                                            ": cannot write as JSON"));
  }
  if (absl::Status s = WriteFileAtomically(
          Path(dossier.set(), dossier.job(), ".json"), json);
      !s.ok()) {
    return s;
  }
  return WriteHtml(dossier.set(), dossier.job(), html);
}

absl::Status DossierStore::WriteHtml(absl::string_view set, int64_t job,
                                     absl::string_view html) const {
  if (absl::Status s = CheckDirectoryName(set); !s.ok()) return s;
  return WriteFileAtomically(HtmlPath(set, job), html);
}

absl::StatusOr<std::vector<int64_t>> DossierStore::Jobs(
    absl::string_view set) const {
  if (absl::Status s = CheckDirectoryName(set); !s.ok()) return s;
  std::vector<int64_t> jobs;
  std::error_code ec;
  const std::string dir = absl::StrCat(root_, "/", set);
  if (!std::filesystem::is_directory(dir, ec)) return jobs;
  for (const auto& entry : std::filesystem::directory_iterator(dir, ec)) {
    // The file name is kept: filename() returns a temporary path, and a
    // view of its text would dangle (ASan found it under the soak).
    const std::string file = entry.path().filename().string();
    absl::string_view name = file;
    int64_t job = 0;
    if (absl::ConsumePrefix(&name, "job-") &&
        absl::ConsumeSuffix(&name, ".json") && absl::SimpleAtoi(name, &job)) {
      jobs.push_back(job);
    }
  }
  if (ec) {
    return absl::UnavailableError(
        absl::StrCat("dossier directory ", dir, ": ", ec.message()));
  }
  std::sort(jobs.begin(), jobs.end());
  return jobs;
}

absl::StatusOr<v1::Dossier> DossierStore::Read(absl::string_view set,
                                               int64_t job) const {
  if (absl::Status s = CheckDirectoryName(set); !s.ok()) return s;
  const std::string path = Path(set, job, ".json");
  absl::StatusOr<std::string> text = ReadFileToString(path);
  if (!text.ok()) return text.status();
  v1::Dossier dossier;
  if (!google::protobuf::util::JsonStringToMessage(*text, &dossier).ok()) {
    return absl::DataLossError(
        absl::StrCat(path, ": not a plumbline.v1.Dossier"));
  }
  return dossier;
}

}  // namespace plumbline::daemon

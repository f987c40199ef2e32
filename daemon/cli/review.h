// File: daemon/cli/review.h
//
// plumbctl's review commands over plumbd's Registry service (admin role);
// registry_commands.cc declares their flags:
//   show     one version: transforms, coefficients with standard errors,
//            fit statistics, provenance (Registry.ShowVersion)
//   diff     two versions feature by feature, default the active version
//            against the newest candidate (Registry.DiffVersions)
//   dossier  a refit job's dossier written to --out (Registry.GetDossier;
//            the set's latest job by default)
//   record   what the ledger keeps of one record: its scores by version
//            and role, the features as stored, its outcome
//            (Registry.GetRecord)
// With `json`, show and diff print the reply message as protobuf JSON
// (proto field names) for scripts; dossier prints its data so.
//
//   ReviewCommand c;
//   c.name = "diff";
//   c.set = "courier";
//   absl::Status s = RunReviewCommand(client, c, std::cout);
//
// Thread-safe: no shared state, but it writes to the given stream.
#ifndef PLUMBLINE_DAEMON_CLI_REVIEW_H_
#define PLUMBLINE_DAEMON_CLI_REVIEW_H_

#include <cstdint>
#include <ostream>
#include <string>

#include "absl/status/status.h"
#include "daemon/cli/commands.h"
#include "plumbline/v1/registry.pb.h"

namespace plumbline::daemon {

struct ReviewCommand {
  std::string name;  // "show", "diff" or "dossier"
  std::string set;
  std::string version;    // show; empty: the active version
  std::string from;       // diff; empty: the active version
  std::string to;         // diff; empty: the newest candidate
  int64_t job = 0;        // dossier; 0: the latest job
  std::string out;        // dossier: the file to write
  std::string record_id;  // record
  bool json = false;
};

// True for "show", "diff", "dossier" and "record".
bool IsReviewCommand(const std::string& name);

// A usage error (INVALID_ARGUMENT "dossier needs --out") before anything is
// sent; OK otherwise.
absl::Status CheckReviewFlags(const ReviewCommand& command);

// CheckReviewFlags' error, else plumbd's status.
absl::Status RunReviewCommand(const ClientOptions& client,
                              const ReviewCommand& command, std::ostream& out);

// The text forms (tests call these on messages of their own).
void PrintVersionDetail(const v1::VersionDetail& detail, std::ostream& out);
void PrintVersionDiff(const v1::VersionDiff& diff, std::ostream& out);
void PrintRecordDetail(const v1::RecordDetail& record, std::ostream& out);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_CLI_REVIEW_H_

// File: daemon/cli/outcomes.cc
#include "daemon/cli/outcomes.h"

#include <algorithm>
#include <string>
#include <vector>

#include "absl/strings/str_cat.h"
#include "daemon/cli/client.h"
#include "daemon/util/files.h"

namespace plumbline::daemon {

absl::Status RunOutcomesCsvCommand(const ClientOptions& client,
                                   const OutcomesCsv& csv,
                                   const OutcomesCommandOptions& options,
                                   std::ostream& out) {
  OutcomesClient remote(client.addr, client.timeout);
  const OutcomesCsvRun run = ReportOutcomesCsv(
      csv, options.batch, [&](const v1::ReportOutcomesRequest& request) {
        return remote.ReportOutcomes(request);
      });
  const size_t refused = run.refusals.size();
  out << "accepted " << run.accepted << ", refused " << refused << "\n";
  if (run.repeats > 0) {
    out << "(" << run.repeats
        << " of the accepted had been recorded before with the same label)\n";
  }
  if (refused > 0) {
    std::vector<std::vector<std::string>> table = {
        {"RECORD_ID", "LINE", "CODE", "MESSAGE"}};
    const size_t listed =
        std::min(refused, static_cast<size_t>(std::max(options.max_listed, 0)));
    for (size_t i = 0; i < listed; ++i) {
      const OutcomeRefusal& r = run.refusals[i];
      table.push_back({r.record_id, absl::StrCat(r.line),
                       absl::StatusCodeToString(r.code), r.message});
    }
    out << FormatTable(table);
    if (listed < refused) {
      out << "... and " << refused - listed << " more"
          << (options.refusals_out.empty()
                  ? "; --refusals_out FILE writes them all"
                  : absl::StrCat(" in ", options.refusals_out))
          << "\n";
    }
  }
  if (!run.status.ok()) {
    out << "stopped at line " << run.first_unsent_line
        << ": the outcomes from there on were not reported\n";
  }
  if (!options.refusals_out.empty()) {
    if (absl::Status s = WriteFileAtomically(options.refusals_out,
                                             FormatRefusalsCsv(run.refusals));
        !s.ok() && run.status.ok()) {
      return s;
    }
  }
  return run.status;
}

absl::Status RunOutcomeCommand(const ClientOptions& client,
                               const v1::Outcome& outcome, std::ostream& out) {
  OutcomesClient remote(client.addr, client.timeout);
  v1::ReportOutcomeRequest request;
  *request.mutable_outcome() = outcome;
  absl::StatusOr<v1::ReportOutcomeReply> reply = remote.ReportOutcome(request);
  if (!reply.ok()) return reply.status();
  out << "accepted"
      << (reply->result().repeat()
              ? " (the same label had been recorded before)"
              : "")
      << "\n";
  return absl::OkStatus();
}

}  // namespace plumbline::daemon

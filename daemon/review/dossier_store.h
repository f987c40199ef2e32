// File: daemon/review/dossier_store.h
//
// Where refit dossiers live: one directory per set under the store's root
// (refit.dossier_dir, default "dossiers" beside the ledger), one pair of
// files per refit job: job-<N>.html, the self-contained document a
// validator files, and job-<N>.json, the plumbline.v1.Dossier it was drawn
// from (protobuf JSON), so the document can be drawn again with the
// approval trail as it stands later (Registry.GetDossier, the page's
// dossier links).
//
//   DossierStore store("var/dossiers");
//   absl::Status s = store.Write(dossier, RenderDossier(dossier));
//   auto jobs = store.Jobs("courier");          // ascending job numbers
//   auto d = store.Read("courier", jobs->back());
//
// Files are replaced atomically (FILE.tmp, then rename), the data first.
// Thread-safe: no state beyond the root; concurrent writers of one job's
// files leave one of the two whole versions.
#ifndef PLUMBLINE_DAEMON_REVIEW_DOSSIER_STORE_H_
#define PLUMBLINE_DAEMON_REVIEW_DOSSIER_STORE_H_

#include <cstdint>
#include <string>
#include <vector>

#include "absl/status/status.h"
#include "absl/status/statusor.h"
#include "absl/strings/string_view.h"
#include "plumbline/v1/registry.pb.h"

namespace plumbline::daemon {

class DossierStore {
 public:
  explicit DossierStore(std::string root) : root_(std::move(root)) {}

  const std::string& root() const { return root_; }
  // ROOT/<set>/job-<N>.html. REQUIRES: a valid set name.
  std::string HtmlPath(absl::string_view set, int64_t job) const;

  // Writes both files of dossier.set / dossier.job, creating directories.
  // INVALID_ARGUMENT for a set name that is not a plain directory name;
  // the file system's error naming the path otherwise.
  absl::Status Write(const v1::Dossier& dossier, absl::string_view html) const;
  // Rewrites the HTML of a stored dossier only.
  absl::Status WriteHtml(absl::string_view set, int64_t job,
                         absl::string_view html) const;

  // The jobs of `set` with a dossier, ascending (none: empty).
  absl::StatusOr<std::vector<int64_t>> Jobs(absl::string_view set) const;
  // NOT_FOUND naming the file when there is none; DATA_LOSS if it does not
  // parse.
  absl::StatusOr<v1::Dossier> Read(absl::string_view set, int64_t job) const;

 private:
  std::string Path(absl::string_view set, int64_t job,
                   absl::string_view ext) const;
  const std::string root_;
};

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_REVIEW_DOSSIER_STORE_H_

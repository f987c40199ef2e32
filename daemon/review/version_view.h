// File: daemon/review/version_view.h
//
// Set versions as a reviewer reads them: one version (transforms,
// coefficients with standard errors, fit statistics) and two versions lined
// up feature by feature (coefficient, change, change in standard errors,
// transforms and levels added or dropped, baseline shifts). The Registry
// service answers ShowVersion and DiffVersions with these messages, the
// refit dossier embeds the diff, and plumbctl's show and diff print them,
// so every form shows the same numbers.
//
//   absl::StatusOr<v1::VersionDetail> d = DescribeVersion(record);
//   absl::StatusOr<v1::VersionDiff> diff = DiffVersions(active, candidate);
//
// Standard errors come from the set's provenance notes, where Plumbline's
// fitter writes "standard errors: intercept 0.04, distance_km 0.03, ..."
// (column names of scorer/design_matrix.h) and the statsmodels export
// "standard errors (...): const 0.04, ...": a coefficient gets the one
// whose name is its column label.
//
// Thread-safe: pure functions.
#ifndef PLUMBLINE_DAEMON_REVIEW_VERSION_VIEW_H_
#define PLUMBLINE_DAEMON_REVIEW_VERSION_VIEW_H_

#include <map>
#include <optional>
#include <string>
#include <vector>

#include "absl/status/statusor.h"
#include "absl/strings/string_view.h"
#include "daemon/registry/version_store.h"
#include "plumbline/v1/coefficient_set.pb.h"
#include "plumbline/v1/registry.pb.h"

namespace plumbline::daemon {

// The wire forms of a stored version and of an audit row.
v1::VersionInfo ToVersionInfo(const VersionRecord& record);
v1::AuditEntry ToAuditEntry(const AuditRecord& record);

// The stored document of `record`. DATA_LOSS naming the version if it does
// not parse.
absl::StatusOr<v1::CoefficientSet> DocumentOf(const VersionRecord& record);

// Column label -> standard error, from provenance notes (see the file
// comment); empty when the notes hold none.
std::map<std::string, double> StandardErrorsFromNotes(absl::string_view notes);

// The set's coefficients in column order, the intercept first.
std::vector<v1::CoefficientLine> CoefficientLines(
    const v1::CoefficientSet& set);

v1::FeatureTransform SummarizeFeature(const v1::Feature& feature);
v1::FitSummary SummarizeFit(const v1::Provenance& provenance);

// The reviewer's view of one version. DATA_LOSS if its document does not
// parse.
absl::StatusOr<v1::VersionDetail> DescribeVersion(const VersionRecord& record);

// `to` against `from`.
v1::VersionDiff DiffSets(const v1::VersionInfo& from_info,
                         const v1::CoefficientSet& from,
                         const v1::VersionInfo& to_info,
                         const v1::CoefficientSet& to);
// The same from stored versions; DATA_LOSS if a document does not parse.
absl::StatusOr<v1::VersionDiff> DiffVersions(const VersionRecord& from,
                                             const VersionRecord& to);

// Which two versions DiffVersions compares: `from` (default: the active
// version) and `to` (default: the newest candidate), from the set's versions
// newest first. NOT_FOUND naming what is missing; FAILED_PRECONDITION when
// both are the same version.
absl::StatusOr<std::pair<VersionRecord, VersionRecord>> DiffPair(
    const std::vector<VersionRecord>& versions, absl::string_view set,
    absl::string_view from_version, absl::string_view to_version);

// PSI of `actual` against `expected` proportions after the monitor's
// empty-bin floor (monitor/stability.h); nullopt when the lengths differ
// or either is empty.
std::optional<double> BaselinePsi(const std::vector<double>& expected,
                                  const std::vector<double>& actual);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_REVIEW_VERSION_VIEW_H_

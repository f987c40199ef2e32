// File: daemon/cli/health_table.cc
#include "daemon/cli/health_table.h"

#include <algorithm>
#include <vector>

#include "absl/strings/str_cat.h"
#include "absl/strings/str_format.h"
#include "absl/time/time.h"
#include "daemon/policy/drift_policy.h"
#include "daemon/policy/figures.h"
#include "daemon/util/text_table.h"

namespace plumbline::daemon {
namespace {

using Row = std::vector<std::string>;

std::string Cell(const v1::Figure& f) {
  return f.defined() ? absl::StrFormat("%.6g", f.value()) : "n/a";
}

}  // namespace

std::string FormatSetHealth(const v1::SetHealth& health) {
  std::string evaluated = "not yet";
  if (health.has_evaluated_at()) {
    evaluated =
        absl::FormatTime("%Y-%m-%dT%H:%M:%SZ",
                         absl::FromUnixSeconds(health.evaluated_at().seconds()),
                         absl::UTCTimeZone());
  }
  std::string out = FormatTable({{"set:", health.set()},
                                 {"version:", health.version()},
                                 {"state:", DriftStateName(health.state())},
                                 {"evaluated:", evaluated}},
                                "");
  absl::StrAppend(&out, "\nreasons:\n");
  if (health.reasons().empty()) absl::StrAppend(&out, "  none\n");
  for (const v1::DriftReason& r : health.reasons()) {
    absl::StrAppend(&out, "  ", r.text(), "\n");
  }
  if (!health.notes().empty()) {
    absl::StrAppend(&out, "notes:\n");
    for (const std::string& n : health.notes())
      absl::StrAppend(&out, "  ", n, "\n");
  }
  if (health.windows().empty()) return out;

  std::vector<Row> rows;
  std::vector<std::string> undefined;
  Row header = {"window"};
  Row span = {"span"};
  Row labelled = {"labelled records"}, positives = {"positives"},
      scored = {"scored records"};
  for (const v1::WindowHealth& w : health.windows()) {
    header.push_back(w.window());
    span.push_back(w.span());
    labelled.push_back(absl::StrCat(w.labelled()));
    positives.push_back(absl::StrCat(w.positives()));
    scored.push_back(absl::StrCat(w.scored()));
  }
  rows = {header, span, labelled, positives, scored};
  for (const WindowFigure& wf : kWindowFigures) {
    Row row = {std::string(wf.metric)};
    for (const v1::WindowHealth& w : health.windows()) {
      const v1::Figure& f = (w.*(wf.get))();
      std::string cell = Cell(f);
      if (wf.metric == "auc" && f.defined()) {
        absl::StrAppendFormat(&cell, " (grid bound %.2g)", w.auc_grid_bound());
      }
      if (!f.defined()) {
        undefined.push_back(
            absl::StrCat(w.window(), " window, ", wf.metric, ": ", f.note()));
      }
      row.push_back(std::move(cell));
    }
    rows.push_back(std::move(row));
  }
  Row refused_labelled = {"refused labelled"},
      refused_scored = {"refused scored"};
  for (const v1::WindowHealth& w : health.windows()) {
    refused_labelled.push_back(absl::StrCat(w.refused_labelled()));
    refused_scored.push_back(absl::StrCat(w.refused_scored()));
  }
  rows.push_back(refused_labelled);
  rows.push_back(refused_scored);
  absl::StrAppend(&out, "\n", FormatTable(rows, ""));

  std::vector<Row> features = {
      {"feature", "window", "psi", "missing_rate", "out_of_range_rate"}};
  const int num_features = health.windows(0).features_size();
  for (int i = 0; i < num_features; ++i) {
    for (const v1::WindowHealth& w : health.windows()) {
      if (i >= w.features_size()) continue;
      const v1::FeatureHealth& fh = w.features(i);
      features.push_back({&w == &health.windows(0) ? fh.feature() : "",
                          w.window(), Cell(fh.psi()), Cell(fh.missing_rate()),
                          Cell(fh.out_of_range_rate())});
      for (const FeatureFigure& ff : kFeatureFigures) {
        const v1::Figure& f = (fh.*(ff.get))();
        if (!f.defined()) {
          undefined.push_back(absl::StrCat(w.window(), " window, ", ff.metric,
                                           " of '", fh.feature(),
                                           "': ", f.note()));
        }
      }
    }
  }
  if (num_features > 0) absl::StrAppend(&out, "\n", FormatTable(features, ""));
  if (!undefined.empty()) {
    absl::StrAppend(&out, "\nundefined (n/a):\n");
    for (const std::string& u : undefined) absl::StrAppend(&out, "  ", u, "\n");
  }
  return out;
}

}  // namespace plumbline::daemon

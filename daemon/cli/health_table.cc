// File: daemon/cli/health_table.cc
#include "daemon/cli/health_table.h"

#include <algorithm>
#include <cmath>
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

std::string Six(double x) { return absl::StrFormat("%.6g", x); }

std::string Duration(int64_t seconds) {
  return absl::FormatDuration(absl::Seconds(seconds));
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
  std::vector<Row> head = {{"set:", health.set()},
                           {"version:", health.version()},
                           {"state:", DriftStateName(health.state())},
                           {"evaluated:", evaluated}};
  if (health.release_evaluations() > 0 && health.state() != v1::STEADY) {
    head.push_back({"release:", absl::StrFormat("held for %d of %d evaluations",
                                                health.release_run(),
                                                health.release_evaluations())});
  }
  if (health.has_last_transition()) {
    const v1::DriftTransition& t = health.last_transition();
    head.push_back(
        {"last change:",
         absl::StrCat(DriftStateName(t.from()), " -> ", DriftStateName(t.to()),
                      " at ",
                      absl::FormatTime("%Y-%m-%dT%H:%M:%SZ",
                                       absl::FromUnixSeconds(t.at().seconds()),
                                       absl::UTCTimeZone()))});
  }
  if (health.stability_tests() > 0) {
    head.push_back({"stability tests:",
                    absl::StrFormat("%d, each at level %.3g (alpha shared "
                                    "by Bonferroni)",
                                    health.stability_tests(),
                                    health.stability_test_alpha())});
  }
  head.push_back({"outcome horizon:",
                  health.outcome_horizon_seconds() > 0
                      ? absl::StrCat(Duration(health.outcome_horizon_seconds()),
                                     " (", health.immature_labelled(),
                                     " labelled records waiting to mature)")
                      : std::string("none")});
  std::string out = FormatTable(head, "");
  if (health.has_last_transition()) {
    absl::StrAppend(&out, "  ", health.last_transition().reason(), "\n");
  }
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
  std::vector<std::string> caveats;
  for (const WindowFigure& wf : kWindowFigures) {
    Row row = {std::string(wf.metric)};
    for (const v1::WindowHealth& w : health.windows()) {
      const v1::Figure& f = (w.*(wf.get))();
      if (!f.defined()) {
        undefined.push_back(
            absl::StrCat(w.window(), " window, ", wf.metric, ": ", f.note()));
      } else if (!f.note().empty()) {
        caveats.push_back(
            absl::StrCat(w.window(), " window, ", wf.metric, ": ", f.note()));
      }
      row.push_back(Cell(f));
    }
    rows.push_back(std::move(row));
    if (wf.metric == "score_psi") {
      Row p = {"score_psi_p_value"}, critical = {"score_psi_critical"};
      for (const v1::WindowHealth& w : health.windows()) {
        const v1::PsiTest& t = w.score_psi_test();
        p.push_back(t.defined() ? Six(t.p_value()) : "n/a");
        critical.push_back(t.defined() ? Six(t.critical_psi()) : "n/a");
        if (!t.defined() && !t.note().empty()) {
          undefined.push_back(
              absl::StrCat(w.window(), " window, score_psi test: ", t.note()));
        }
      }
      rows.push_back(std::move(p));
      rows.push_back(std::move(critical));
    }
  }
  Row exact = {"exact figures over"}, refused_labelled = {"refused labelled"},
      refused_scored = {"refused scored"};
  for (const v1::WindowHealth& w : health.windows()) {
    exact.push_back(w.unstored_labelled() > 0
                        ? absl::StrCat(w.exact_records(), " (",
                                       w.unstored_labelled(), " not stored)")
                        : absl::StrCat(w.exact_records()));
    refused_labelled.push_back(absl::StrCat(w.refused_labelled()));
    refused_scored.push_back(absl::StrCat(w.refused_scored()));
  }
  rows.push_back(exact);
  rows.push_back(refused_labelled);
  rows.push_back(refused_scored);
  absl::StrAppend(&out, "\n", FormatTable(rows, ""));

  std::vector<Row> features = {{"feature", "window", "psi", "psi_p_value",
                                "psi_critical", "missing_rate",
                                "out_of_range_rate"}};
  const int num_features = health.windows(0).features_size();
  for (int i = 0; i < num_features; ++i) {
    for (const v1::WindowHealth& w : health.windows()) {
      if (i >= w.features_size()) continue;
      const v1::FeatureHealth& fh = w.features(i);
      const v1::PsiTest& t = fh.psi_test();
      features.push_back(
          {&w == &health.windows(0) ? fh.feature() : "", w.window(),
           Cell(fh.psi()), t.defined() ? Six(t.p_value()) : "n/a",
           t.defined() ? Six(t.critical_psi()) : "n/a", Cell(fh.missing_rate()),
           Cell(fh.out_of_range_rate())});
      if (!t.defined() && fh.psi().defined() && !t.note().empty()) {
        undefined.push_back(absl::StrCat(w.window(), " window, psi test of '",
                                         fh.feature(), "': ", t.note()));
      }
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

  if (!health.cusum().empty()) {
    std::vector<Row> charts = {{"cusum", "alternative", "value", "limit",
                                "in-control ARL", "alarms", "records"}};
    for (const v1::CusumChart& c : health.cusum()) {
      const std::string alternative =
          c.alternative_slope() == 1
              ? absl::StrFormat("odds x %.4g", std::exp(c.alternative_shift()))
              : absl::StrFormat("log-odds x %.4g", c.alternative_slope());
      if (!c.ready()) {
        charts.push_back(
            {c.chart(), alternative, "n/a", "n/a", "n/a", "n/a", "n/a"});
        undefined.push_back(absl::StrCat("cusum ", c.chart(), ": ", c.note()));
        continue;
      }
      charts.push_back({c.chart(), alternative, Six(c.value()), Six(c.limit()),
                        absl::StrFormat("%.0f (+-%.0f) records",
                                        c.arl_records(), c.arl_error_records()),
                        absl::StrCat(c.alarms()), absl::StrCat(c.records())});
      if (!c.note().empty()) {
        caveats.push_back(absl::StrCat("cusum ", c.chart(), ": ", c.note()));
      }
    }
    absl::StrAppend(&out, "\n", FormatTable(charts, ""));
  }
  if (!health.outcome_coverage().empty()) {
    std::vector<Row> coverage = {
        {"score age", "scored", "labelled", "outcome coverage", "mature"}};
    for (const v1::AgeCoverage& a : health.outcome_coverage()) {
      coverage.push_back({absl::StrCat(Duration(a.min_age_seconds()), " - ",
                                       Duration(a.max_age_seconds())),
                          absl::StrCat(a.scored()), absl::StrCat(a.labelled()),
                          Cell(a.coverage()), a.mature() ? "yes" : "no"});
    }
    absl::StrAppend(&out, "\n", FormatTable(coverage, ""));
  }
  if (!caveats.empty()) {
    absl::StrAppend(&out, "\ncaveats:\n");
    for (const std::string& c : caveats) absl::StrAppend(&out, "  ", c, "\n");
  }
  if (!undefined.empty()) {
    absl::StrAppend(&out, "\nundefined (n/a):\n");
    for (const std::string& u : undefined) absl::StrAppend(&out, "  ", u, "\n");
  }
  return out;
}

}  // namespace plumbline::daemon

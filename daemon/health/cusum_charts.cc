// File: daemon/health/cusum_charts.cc
#include "daemon/health/cusum_charts.h"

#include <cmath>
#include <utility>

#include "absl/strings/str_cat.h"
#include "absl/strings/str_format.h"
#include "absl/strings/str_join.h"
#include "daemon/util/caller_text.h"
#include "scorer/logistic.h"

namespace plumbline::daemon {
namespace {

double Logit(double p) { return std::log(p / (1 - p)); }

// The charts the options ask for, without limits.
std::vector<std::pair<std::string, monitor::LogOddsChange>> ChartList(
    const CusumOptions& o) {
  std::vector<std::pair<std::string, monitor::LogOddsChange>> list;
  if (!o.enabled) return list;
  list.emplace_back("upper",
                    monitor::LogOddsChange::OddsRatio(o.upper_odds_ratio));
  list.emplace_back("lower",
                    monitor::LogOddsChange::OddsRatio(o.lower_odds_ratio));
  if (o.slope_alternative != 0) {
    list.emplace_back("slope", monitor::LogOddsChange{0, o.slope_alternative});
  }
  return list;
}

}  // namespace

absl::Status CusumOptions::Check() const {
  auto bad = [](absl::string_view field, absl::string_view what) {
    return absl::InvalidArgumentError(
        absl::StrCat("drift_policy.cusum.", field, ": ", what));
  };
  if (!(upper_odds_ratio > 1) || !std::isfinite(upper_odds_ratio)) {
    return bad(
        "upper_odds_ratio",
        absl::StrFormat("must be finite and > 1, got %g", upper_odds_ratio));
  }
  if (!(lower_odds_ratio > 0 && lower_odds_ratio < 1)) {
    return bad("lower_odds_ratio",
               absl::StrFormat("must lie in (0, 1), got %g", lower_odds_ratio));
  }
  if (slope_alternative != 0 &&
      (!(slope_alternative > 0) || !std::isfinite(slope_alternative) ||
       slope_alternative == 1)) {
    return bad("slope_alternative",
               absl::StrFormat("must be 0 (no slope chart) or a finite slope "
                               "> 0 other than 1, got %g",
                               slope_alternative));
  }
  if (!(in_control_arl > 1 && in_control_arl <= 1e12)) {
    return bad(
        "in_control_arl_records",
        absl::StrFormat("must lie in (1, 1e12], got %g", in_control_arl));
  }
  if (lattice_states < 20) {
    return bad("lattice_states", "must be at least 20");
  }
  return absl::OkStatus();
}

absl::StatusOr<monitor::RiskDistribution> BaselineRisks(
    const v1::CoefficientSet& set, std::string* caveat) {
  const v1::Distribution& d = set.score_baseline();
  if (!set.has_score_baseline() || d.proportions_size() == 0) {
    return absl::FailedPreconditionError(
        "no score_baseline: the control limit needs the set's distribution "
        "of predicted risk");
  }
  const std::vector<double> edges(d.edges().begin(), d.edges().end());
  const std::vector<double> proportions(d.proportions().begin(),
                                        d.proportions().end());
  if (edges.empty()) {
    return absl::FailedPreconditionError(
        "score_baseline has no edges: one bin says nothing about the spread "
        "of predicted risk");
  }
  for (double e : edges) {
    if (!(e > 0 && e < 1)) {
      return absl::FailedPreconditionError(absl::StrFormat(
          "score_baseline edge %g is not a probability in (0, 1)", e));
    }
  }
  // Without min or max, close an outer bin one neighbouring bin width
  // (on the log-odds scale; 1 when there is no neighbour) beyond its edge.
  const size_t k = edges.size();
  const double inner_low = k >= 2 ? Logit(edges[1]) - Logit(edges[0]) : 1.0;
  const double inner_high =
      k >= 2 ? Logit(edges[k - 1]) - Logit(edges[k - 2]) : 1.0;
  double min = 0, max = 0;
  std::vector<std::string> approximated;
  if (d.has_min() && d.min() > 0 && d.min() < edges.front()) {
    min = d.min();
  } else {
    min = Logistic(Logit(edges.front()) - inner_low);
    approximated.push_back("min");
  }
  if (d.has_max() && d.max() < 1 && d.max() > edges.back()) {
    max = d.max();
  } else {
    max = Logistic(Logit(edges.back()) + inner_high);
    approximated.push_back("max");
  }
  if (!approximated.empty() && caveat != nullptr) {
    *caveat = absl::StrCat(
        "score_baseline has no usable ", absl::StrJoin(approximated, " or "),
        ": its outer bins were closed one neighbouring bin width further out "
        "(log-odds scale)");
  }
  return monitor::RiskDistribution::FromProbabilityHistogram(edges, proportions,
                                                             min, max);
}

std::vector<CusumLimit> ChooseCusumLimits(const v1::CoefficientSet& set,
                                          const CusumOptions& options) {
  std::vector<CusumLimit> out;
  std::string caveat;
  absl::StatusOr<monitor::RiskDistribution> risks = BaselineRisks(set, &caveat);
  monitor::RunLengthOptions run;
  run.lattice_states = options.lattice_states;
  for (auto& [name, alternative] : ChartList(options)) {
    CusumLimit l{name, alternative, absl::UnknownError("not computed"), caveat};
    if (!risks.ok()) {
      l.limit = risks.status();
    } else {
      l.limit = monitor::ChooseControlLimit(alternative, options.in_control_arl,
                                            *risks, run);
    }
    out.push_back(std::move(l));
  }
  return out;
}

CusumCharts::CusumCharts(const CusumOptions& options)
    : enabled_(options.enabled) {
  for (auto& [name, alternative] : ChartList(options)) {
    Chart c;
    c.name = name;
    c.alternative = alternative;
    c.note = "the control limit is chosen at the version's first evaluation";
    charts_.push_back(std::move(c));
  }
}

void CusumCharts::SetLimits(std::vector<CusumLimit> limits) {
  for (Chart& c : charts_) {
    for (CusumLimit& l : limits) {
      if (l.chart != c.name) continue;
      if (!l.limit.ok()) {
        c.note = absl::StrCat("no control limit: ", l.limit.status().message());
        continue;
      }
      absl::StatusOr<monitor::RiskAdjustedCusum> cusum =
          monitor::RiskAdjustedCusum::Create(c.alternative, l.limit->limit);
      if (!cusum.ok()) {
        c.note = absl::StrCat("no chart: ", cusum.status().message());
        continue;
      }
      c.cusum = *std::move(cusum);
      c.limit = *l.limit;
      c.note = l.caveat;
    }
  }
  limits_set_ = true;
  for (const auto& [log_odds, label] : buffered_) AddToCharts(log_odds, label);
  buffered_.clear();
  buffered_.shrink_to_fit();
  if (skipped_ > 0) {
    for (Chart& c : charts_) {
      absl::StrAppend(&c.note, c.note.empty() ? "" : "; ", skipped_,
                      " labelled records before the limit was chosen were "
                      "past the buffer and not charted");
    }
  }
}

void CusumCharts::Add(double log_odds, int label) {
  if (!enabled_ || (label != 0 && label != 1) || !std::isfinite(log_odds)) {
    return;
  }
  if (!limits_set_) {
    if (static_cast<int64_t>(buffered_.size()) < kMaxBuffered) {
      buffered_.emplace_back(log_odds, static_cast<int8_t>(label));
    } else {
      ++skipped_;
    }
    return;
  }
  AddToCharts(log_odds, label);
}

void CusumCharts::AddToCharts(double log_odds, int label) {
  for (Chart& c : charts_) {
    if (!c.cusum) continue;
    absl::StatusOr<monitor::CusumStep> step = c.cusum->Add(log_odds, label);
    if (step.ok() && step->alarm) c.last_alarm_value = step->value;
  }
}

void CusumCharts::Fill(v1::SetHealth* out) const {
  for (const Chart& c : charts_) {
    v1::CusumChart* chart = out->add_cusum();
    chart->set_chart(c.name);
    chart->set_alternative_shift(c.alternative.shift);
    chart->set_alternative_slope(c.alternative.slope);
    chart->set_note(c.note);
    if (!c.cusum || !c.limit) continue;
    chart->set_ready(true);
    chart->set_value(c.cusum->value());
    chart->set_limit(c.cusum->limit());
    chart->set_target_arl_records(c.limit->target_arl);
    chart->set_arl_records(c.limit->arl.value);
    chart->set_arl_error_records(c.limit->arl.discretisation_error);
    chart->set_alarms(c.cusum->alarms());
    chart->set_records(c.cusum->records());
    chart->set_records_since_alarm(c.cusum->records_since_alarm());
    chart->set_last_alarm_value(c.last_alarm_value);
  }
}

CusumCharts::State CusumCharts::state() const {
  State state;
  state.limits_set = limits_set_;
  for (const Chart& c : charts_) {
    ChartState cs;
    cs.name = c.name;
    cs.note = c.note;
    if (c.cusum && c.limit) {
      cs.limit = c.limit;
      cs.cusum = c.cusum->state();
    }
    cs.last_alarm_value = c.last_alarm_value;
    state.charts.push_back(std::move(cs));
  }
  state.buffered = buffered_;
  state.skipped = skipped_;
  return state;
}

absl::Status CusumCharts::Restore(State state) {
  auto bad = [](absl::string_view what) {
    return absl::InvalidArgumentError(absl::StrCat("CUSUM state: ", what));
  };
  if (state.charts.size() != charts_.size()) {
    return bad(absl::StrCat(state.charts.size(),
                            " charts; the options ask for ", charts_.size()));
  }
  std::vector<Chart> charts = charts_;
  for (size_t i = 0; i < charts.size(); ++i) {
    Chart& c = charts[i];
    ChartState& cs = state.charts[i];
    if (cs.name != c.name) {
      return bad(absl::StrCat("chart ", i, " is '", CallerText(cs.name),
                              "'; the options' chart ", i, " is ", c.name));
    }
    const std::string chart = absl::StrCat("chart ", c.name, ": ");
    if (cs.note.size() > kMaxNoteBytes) {
      return bad(absl::StrCat(chart, "note of ", cs.note.size(),
                              " bytes is longer than ", kMaxNoteBytes));
    }
    if (!(cs.last_alarm_value >= 0) || std::isinf(cs.last_alarm_value)) {
      return bad(absl::StrCat(chart, "last_alarm_value is ",
                              cs.last_alarm_value,
                              "; it must be finite and >= 0"));
    }
    c.note = std::move(cs.note);
    c.last_alarm_value = cs.last_alarm_value;
    if (!cs.limit) {
      const monitor::RiskAdjustedCusum::State& z = cs.cusum;
      if (z.value != 0 || z.records != 0 || z.alarms != 0 ||
          z.records_since_alarm != 0 || cs.last_alarm_value != 0) {
        return bad(absl::StrCat(chart, "counts records but has no limit"));
      }
      continue;
    }
    if (!state.limits_set) {
      return bad(absl::StrCat(chart, "has a limit before limits were set"));
    }
    const monitor::ControlLimit& l = *cs.limit;
    if (!std::isfinite(l.target_arl) || !std::isfinite(l.arl.value) ||
        !std::isfinite(l.arl.discretisation_error)) {
      return bad(absl::StrCat(chart, "target or estimated ARL not finite"));
    }
    absl::StatusOr<monitor::RiskAdjustedCusum> cusum =
        monitor::RiskAdjustedCusum::Create(c.alternative, l.limit);
    if (!cusum.ok()) return bad(absl::StrCat(chart, cusum.status().message()));
    if (absl::Status s = cusum->Restore(cs.cusum); !s.ok()) {
      return bad(absl::StrCat(chart, s.message()));
    }
    c.cusum = *std::move(cusum);
    c.limit = l;
  }
  if (state.buffered.size() > static_cast<size_t>(kMaxBuffered)) {
    return bad(absl::StrCat(state.buffered.size(),
                            " buffered records; the buffer holds at most ",
                            kMaxBuffered));
  }
  if ((state.limits_set || !enabled_) && !state.buffered.empty()) {
    return bad("buffered records, but nothing waits for limits");
  }
  for (size_t i = 0; i < state.buffered.size(); ++i) {
    const auto& [log_odds, label] = state.buffered[i];
    if (!std::isfinite(log_odds) || (label != 0 && label != 1)) {
      return bad(absl::StrCat("buffered record ", i, " is (", log_odds, ", ",
                              label, "); log-odds must be finite, labels 0/1"));
    }
  }
  if (state.skipped < 0 || state.skipped > (int64_t{1} << 62)) {
    return bad(absl::StrCat("skipped is ", state.skipped));
  }
  charts_ = std::move(charts);
  limits_set_ = state.limits_set;
  buffered_ = std::move(state.buffered);
  skipped_ = state.skipped;
  return absl::OkStatus();
}

}  // namespace plumbline::daemon

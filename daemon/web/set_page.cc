// File: daemon/web/set_page.cc
// The page of one set (ModelHealthPages::SetPage).
#include <algorithm>
#include <cmath>
#include <map>
#include <optional>
#include <utility>
#include <vector>

#include "absl/strings/str_cat.h"
#include "daemon/charts/charts.h"
#include "daemon/charts/format.h"
#include "daemon/charts/html.h"
#include "daemon/policy/figures.h"
#include "daemon/review/chart_data.h"
#include "daemon/scoring/core.h"
#include "daemon/web/page_parts.h"
#include "daemon/web/pages.h"

namespace plumbline::daemon {
namespace {

using charts::Html;
using charts::HtmlAttribute;

std::string Panel(const std::string& svg) {
  return absl::StrCat("<div class=\"panel\">", svg, "</div>");
}

const DriftThreshold* ThresholdOf(const DriftPolicy& policy,
                                  absl::string_view metric) {
  for (const DriftThreshold& t : policy.thresholds()) {
    if (t.metric == metric) return &t;
  }
  return nullptr;
}

// Threshold lines of `metric`; relative ones times `training`, DISTANCE ones
// at target -/+ the threshold.
std::vector<charts::ThresholdLine> Lines(const DriftPolicy& policy,
                                         absl::string_view metric,
                                         double training) {
  std::vector<charts::ThresholdLine> out;
  const DriftThreshold* t = ThresholdOf(policy, metric);
  if (t == nullptr) return out;
  const double scale = t->relative_to_training ? training : 1.0;
  if (t->relative_to_training && !(training > 0)) return out;
  for (const auto& [name, value, level] :
       {std::tuple<const char*, double, charts::Level>{"watch", t->watch,
                                                       charts::Level::kWatch},
        {"drifting", t->drifting, charts::Level::kDrifting}}) {
    if (t->direction == DriftThreshold::Direction::kDistance) {
      out.push_back({absl::StrCat(name, " +"), t->target + value, level});
      out.push_back({absl::StrCat(name, " −"), t->target - value, level});
    } else {
      out.push_back({name, value * scale, level});
    }
  }
  return out;
}

// One window's series of `value(point)` over the history, one point per
// recorded time (the version serving now preferred when two share a time).
charts::TimeSeries SeriesOf(
    const std::vector<HistoryPoint>& history, absl::string_view window,
    absl::string_view version, std::string name,
    const std::function<double(const HistoryPoint&)>& value) {
  std::map<absl::Time, const HistoryPoint*> by_time;
  for (const HistoryPoint& p : history) {
    if (p.window != window) continue;
    auto [it, inserted] = by_time.emplace(p.at, &p);
    if (!inserted && p.version == version) it->second = &p;
  }
  charts::TimeSeries s;
  s.name = std::move(name);
  for (const auto& [at, p] : by_time) s.points.push_back({at, value(*p)});
  return s;
}

std::function<double(const HistoryPoint&)> Figure(std::string metric) {
  return [metric](const HistoryPoint& p) {
    auto it = p.figures.find(metric);
    return it == p.figures.end() ? charts::kUndefined : it->second;
  };
}

}  // namespace

HttpReply ModelHealthPages::SetPage(const std::string& set) {
  if (!CheckSetName(set).ok()) return NotFound("no such set");
  absl::StatusOr<v1::SetHealth> health = parts_.monitor->Health(set);
  if (!health.ok()) {
    return NotFound(absl::StrCat("set ", set, " is not monitored"));
  }
  const v1::SetHealth& h = *health;
  const absl::Time now = options_.now();
  const DriftPolicy& policy = *parts_.policy;
  double training_log_loss = 0;
  if (absl::StatusOr<PlanPtr> plan = parts_.lifecycle->Plan(set, h.version());
      plan.ok()) {
    training_log_loss = (*plan)->set().provenance().training_log_loss();
  }
  std::string body;

  // State.
  absl::StrAppend(&body,
                  "<section id=\"state\"><h2>State</h2><div "
                  "class=\"facts\"><div><span class=\"k\">state</span>"
                  "<span class=\"v\">",
                  charts::StateBadge(LevelOf(h.state())),
                  "</span></div><div><span class=\"k\">version</span><span "
                  "class=\"v\">",
                  Html(h.version()),
                  "</span></div><div><span class=\"k\">last evaluation</span>"
                  "<span class=\"v\">",
                  EvaluatedText(h, now), "</span></div>");
  for (const v1::WindowHealth& w : h.windows()) {
    absl::StrAppend(&body, "<div><span class=\"k\">", Html(w.window()),
                    " window: scored / labelled</span><span class=\"v\">",
                    charts::CountText(w.scored()), " / ",
                    charts::CountText(w.labelled()), "</span></div>");
  }
  absl::StrAppend(&body, "</div>");
  if (h.reasons_size() > 0) {
    absl::StrAppend(&body, "<h3>Reasons</h3><ul class=\"reasons\">");
    for (const v1::DriftReason& r : h.reasons()) {
      absl::StrAppend(&body, "<li>", charts::StateBadge(LevelOf(r.state())),
                      " ", Html(r.text()), "</li>");
    }
    absl::StrAppend(&body, "</ul>");
  } else {
    absl::StrAppend(&body,
                    "<p class=\"lead\">No figure crossed a threshold "
                    "of the drift policy.</p>");
  }
  if (h.notes_size() > 0) {
    absl::StrAppend(&body, "<h3>Not judged</h3><ul class=\"reasons\">");
    for (const std::string& n : h.notes()) {
      absl::StrAppend(&body, "<li class=\"note\">", Html(n), "</li>");
    }
    absl::StrAppend(&body, "</ul>");
  }
  absl::StrAppend(&body, "</section>");

  // Calibration, scores, stability: one chart per window.
  std::string calibration, scores, stability;
  for (const v1::WindowHealth& w : h.windows()) {
    const std::string suffix = w.window() == "time" ? "time" : "count";
    charts::ReliabilityDiagram r;
    r.text.id = absl::StrCat("reliability-", suffix);
    r.text.title = absl::StrCat("Reliability, ", w.window(), " window");
    r.text.subtitle = absl::StrCat(
        w.span(), " · ", charts::CountText(w.labelled()), " labelled");
    r.series.push_back(ReliabilitySeriesOf(
        absl::StrCat("version ", h.version()), w.reliability()));
    absl::StrAppend(&calibration,
                    Panel(ChartOrNote(charts::RenderReliabilityDiagram(r))));
    charts::BaselineHistogram s = HistogramOf(w.score_shares());
    s.text.id = absl::StrCat("score-", suffix);
    s.text.title =
        absl::StrCat("Scores against the baseline, ", w.window(), " window");
    s.text.subtitle =
        absl::StrCat(w.span(), " · score PSI ", FigureText(w.score_psi()));
    if (!w.score_psi().defined()) {
      s.text.description = w.score_psi().note();
    }
    s.value_label = "predicted probability";
    s.window_name = absl::StrCat(w.window(), " window");
    s.baseline_name = "training baseline";
    absl::StrAppend(&scores,
                    Panel(ChartOrNote(charts::RenderBaselineHistogram(s))));
    charts::StabilityBars b =
        StabilityBarsOf(w.features(), policy, &h, w.window());
    b.text.id = absl::StrCat("stability-", suffix);
    b.text.title = absl::StrCat("Feature stability, ", w.window(), " window");
    b.text.subtitle =
        absl::StrCat(w.span(), " · ", charts::CountText(w.scored()), " scored");
    absl::StrAppend(&stability,
                    Panel(ChartOrNote(charts::RenderStabilityBars(b))));
  }
  absl::StrAppend(
      &body,
      "<section id=\"calibration\"><h2>Calibration</h2><p class=\"lead\">"
      "Mean predicted probability against the observed rate of the event in "
      "10 equal-width bins (the bins of the expected calibration error); "
      "points on the diagonal are calibrated.</p><div class=\"grid\">",
      calibration, "</div></section>",
      "<section id=\"scores\"><h2>Score distribution</h2><p class=\"lead\">"
      "Share of scored records per bin of the set's score baseline (deciles "
      "of the training probabilities).</p><div class=\"grid\">",
      scores, "</div></section>",
      "<section id=\"stability\"><h2>Stability per feature</h2><p "
      "class=\"lead\">Population stability index of each feature against its "
      "baseline, with the drift policy's thresholds and its verdict in "
      "words.</p><div class=\"grid\">",
      stability, "</div>");
  // Feature table and distributions (count window).
  absl::StrAppend(&body,
                  "<table id=\"feature-table\"><tr><th>feature</th><th>window"
                  "</th><th class=\"num\">PSI</th><th class=\"num\">missing"
                  "</th><th class=\"num\">out of range</th><th>note</th></tr>");
  for (const v1::WindowHealth& w : h.windows()) {
    for (const v1::FeatureHealth& f : w.features()) {
      absl::StrAppend(
          &body, "<tr><td>", Html(f.feature()), "</td><td>", Html(w.window()),
          "</td><td class=\"num\">", FigureText(f.psi()),
          "</td><td class=\"num\">", FigureText(f.missing_rate()),
          "</td><td class=\"num\">", FigureText(f.out_of_range_rate()),
          "</td><td class=\"note\">", Html(f.psi().note()), "</td></tr>");
    }
  }
  absl::StrAppend(&body, "</table>");
  if (const v1::WindowHealth* count = WindowOf(h, "count")) {
    absl::StrAppend(&body,
                    "<h3>Feature distributions, count window</h3><div "
                    "class=\"grid\">");
    for (int i = 0; i < count->features_size(); ++i) {
      const v1::FeatureHealth& f = count->features(i);
      if (f.shares().baseline_size() == 0) continue;
      charts::BaselineHistogram hist = HistogramOf(f.shares());
      hist.text.id = absl::StrCat("feature-", i, "-count");
      hist.text.title = f.feature();
      hist.text.subtitle =
          absl::StrCat("PSI ", FigureText(f.psi()), " · missing ",
                       FigureText(f.missing_rate()));
      hist.value_label = f.feature();
      hist.window_name = "count window";
      hist.baseline_name = "training baseline";
      absl::StrAppend(
          &body, Panel(ChartOrNote(charts::RenderBaselineHistogram(hist))));
    }
    absl::StrAppend(&body, "</div>");
  }
  absl::StrAppend(&body, "</section>");

  // History.
  absl::StrAppend(&body, "<section id=\"history\"><h2>History, last ",
                  FormatSpan(options_.chart_span), "</h2>");
  std::vector<HistoryPoint> history;
  if (parts_.history != nullptr) {
    absl::StatusOr<std::vector<HistoryPoint>> read =
        parts_.history->Read(set, now - options_.chart_span);
    if (read.ok()) {
      history = *std::move(read);
    } else {
      absl::StrAppend(&body, "<p class=\"lead\">History unavailable: ",
                      Html(read.status().message()), "</p>");
    }
  } else {
    absl::StrAppend(&body,
                    "<p class=\"lead\">plumbd keeps no history "
                    "(pages.disabled).</p>");
  }
  absl::StrAppend(
      &body, "<p class=\"lead\">", history.size(),
      " recorded window evaluations. A gap means the figure was undefined "
      "then (too few records, one class only).</p><div class=\"grid\">");
  struct HistoryChart {
    const char* id;
    const char* title;
    const char* label;
    const char* unit;
    std::string metric;
  };
  const HistoryChart kCharts[] = {
      {"history-log-loss", "Log-loss", "log-loss", "nats per record",
       "log_loss"},
      {"history-calibration", "Calibration-in-the-large",
       "mean predicted − observed rate", "", "calibration_in_the_large"},
      {"history-score-psi", "Score stability", "score PSI", "", "score_psi"}};
  for (const HistoryChart& c : kCharts) {
    charts::TimeSeriesChart t;
    t.text.id = c.id;
    t.text.title = c.title;
    t.value_label = c.label;
    t.value_unit = c.unit;
    for (const char* window : {"count", "time"}) {
      t.series.push_back(SeriesOf(history, window, h.version(),
                                  absl::StrCat(window, " window"),
                                  Figure(c.metric)));
    }
    t.thresholds = Lines(policy, c.metric, training_log_loss);
    absl::StrAppend(&body, Panel(ChartOrNote(charts::RenderTimeSeries(t))));
  }
  {
    // The features with the largest PSI now, count window.
    std::vector<std::pair<double, std::string>> ranked;
    if (const v1::WindowHealth* count = WindowOf(h, "count")) {
      for (const v1::FeatureHealth& f : count->features()) {
        ranked.emplace_back(f.psi().defined() ? f.psi().value() : -1,
                            f.feature());
      }
    }
    std::stable_sort(
        ranked.begin(), ranked.end(),
        [](const auto& a, const auto& b) { return a.first > b.first; });
    charts::TimeSeriesChart t;
    t.text.id = "history-feature-psi";
    t.text.title = "Feature stability, count window";
    t.text.subtitle = "the features with the largest PSI now";
    t.value_label = "feature PSI";
    for (size_t i = 0; i < ranked.size() && i < charts::kMaxSeries; ++i) {
      const std::string feature = ranked[i].second;
      t.series.push_back(SeriesOf(history, "count", h.version(), feature,
                                  [feature](const HistoryPoint& p) {
                                    auto f = p.features.find(feature);
                                    if (f == p.features.end())
                                      return charts::kUndefined;
                                    auto v = f->second.find("feature_psi");
                                    return v == f->second.end()
                                               ? charts::kUndefined
                                               : v->second;
                                  }));
    }
    if (t.series.empty()) {
      t.series.push_back(
          SeriesOf(history, "count", h.version(), "no feature", Figure("")));
    }
    t.thresholds = Lines(policy, "feature_psi", training_log_loss);
    absl::StrAppend(&body, Panel(ChartOrNote(charts::RenderTimeSeries(t))));
  }
  absl::StrAppend(&body, "</div></section>");

  // Every figure.
  absl::StrAppend(&body,
                  "<section id=\"figures\"><h2>Every figure</h2><table><tr>"
                  "<th>figure</th>");
  for (const v1::WindowHealth& w : h.windows()) {
    absl::StrAppend(&body, "<th class=\"num\">", Html(w.window()),
                    " window</th>");
  }
  absl::StrAppend(&body, "<th>what it measures</th></tr>");
  for (const WindowFigure& f : kWindowFigures) {
    absl::StrAppend(&body, "<tr><td>", Html(f.metric), "</td>");
    for (const v1::WindowHealth& w : h.windows()) {
      const v1::Figure& fig = (w.*f.get)();
      absl::StrAppend(&body, "<td class=\"num\" title=\"",
                      HtmlAttribute(fig.note()), "\">", FigureText(fig),
                      "</td>");
    }
    absl::StrAppend(&body, "<td class=\"note\">", Html(f.help), "</td></tr>");
  }
  absl::StrAppend(&body, "</table></section>");

  // Versions and audit.
  absl::StrAppend(&body, "<section id=\"versions\"><h2>Versions</h2>");
  if (absl::StatusOr<std::vector<VersionRecord>> versions =
          parts_.lifecycle->List(set);
      versions.ok()) {
    absl::StrAppend(&body,
                    "<table><tr><th>version</th><th>state</th><th>created "
                    "(UTC)</th><th>by</th><th>why</th><th>holdout comparison"
                    "</th></tr>");
    for (const VersionRecord& v : *versions) {
      absl::StrAppend(&body, "<tr><td>", Html(v.version), "</td><td>",
                      Html(VersionStateName(v.state)), "</td><td>",
                      UtcText(v.created_at), "</td><td>", Html(v.created_by),
                      "</td><td class=\"note\">", Html(v.reason),
                      "</td><td class=\"note\">", Html(v.comparison),
                      "</td></tr>");
    }
    absl::StrAppend(&body, "</table>");
  } else {
    absl::StrAppend(&body, "<p class=\"lead\">",
                    Html(versions.status().message()), "</p>");
  }
  absl::StrAppend(&body,
                  "</section><section id=\"dossiers\"><h2>Refit "
                  "dossiers</h2>");
  std::vector<int64_t> jobs;
  if (parts_.dossiers != nullptr) {
    if (auto listed = parts_.dossiers->Jobs(set); listed.ok()) jobs = *listed;
  }
  if (jobs.empty()) {
    absl::StrAppend(&body,
                    "<p class=\"lead\">No refit job has run for this "
                    "set.</p>");
  } else {
    absl::StrAppend(&body, "<ul class=\"reasons\">");
    for (auto it = jobs.rbegin(); it != jobs.rend(); ++it) {
      absl::StrAppend(&body, "<li><a href=\"/sets/", HtmlAttribute(set),
                      "/dossiers/", *it, "\">job ", *it, "</a> (",
                      Html(parts_.dossiers->HtmlPath(set, *it)), ")</li>");
    }
    absl::StrAppend(&body, "</ul>");
  }
  absl::StrAppend(&body,
                  "</section><section id=\"audit\"><h2>Audit trail"
                  "</h2>");
  if (absl::StatusOr<std::vector<AuditRecord>> audit =
          parts_.lifecycle->Audit(set);
      audit.ok()) {
    absl::StrAppend(&body,
                    "<p class=\"lead\">Newest first, the last 100.</p><table>"
                    "<tr><th>when (UTC)</th><th>version</th><th>action</th>"
                    "<th>actor</th><th>detail</th></tr>");
    int shown = 0;
    for (auto it = audit->rbegin(); it != audit->rend() && shown < 100;
         ++it, ++shown) {
      absl::StrAppend(&body, "<tr><td class=\"num\">", UtcText(it->at),
                      "</td><td>", Html(it->version), "</td><td>",
                      Html(it->action), "</td><td>", Html(it->actor),
                      "</td><td class=\"note\">", Html(it->detail),
                      "</td></tr>");
    }
    absl::StrAppend(&body, "</table>");
  }
  absl::StrAppend(&body, "</section>");

  HttpReply r;
  charts::HtmlPageOptions o;
  o.kind = "plumbd model health";
  o.title = absl::StrCat("Set ", set);
  o.subtitle = absl::StrCat(
      "version ", h.version(), " · ", DriftStateName(h.state()),
      " · evaluated every ", FormatSpan(options_.tick),
      " · this page reloads every ", options_.refresh_seconds, " s");
  o.refresh_seconds = options_.refresh_seconds;
  o.footer = FooterText(now);
  r.body = absl::StrCat(charts::HtmlPage(o, body));
  // A link back to the overview, ahead of the caution.
  const std::string back = "<header class=\"band\">";
  const size_t at = r.body.find(back);
  if (at != std::string::npos) {
    r.body.insert(at + back.size(),
                  "<a class=\"noprint\" href=\"/\">← every set</a>");
  }
  return r;
}

}  // namespace plumbline::daemon

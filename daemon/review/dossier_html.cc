// File: daemon/review/dossier_html.cc
#include "daemon/review/dossier_html.h"

#include <cmath>
#include <optional>
#include <vector>

#include "absl/strings/str_cat.h"
#include "absl/strings/str_format.h"
#include "absl/time/time.h"
#include "daemon/charts/charts.h"
#include "daemon/charts/format.h"
#include "daemon/charts/html.h"
#include "daemon/policy/figures.h"
#include "daemon/review/chart_data.h"
#include "daemon/util/time.h"

namespace plumbline::daemon {
namespace {

using charts::Html;

std::string N(double v, int digits = 4) {
  return charts::ShortNumber(v, digits);
}
std::string Opt(bool has, double v, int digits = 4) {
  return has ? N(v, digits) : "—";
}

std::string When(const google::protobuf::Timestamp& ts) {
  if (ts.seconds() == 0 && ts.nanos() == 0) return "—";
  absl::StatusOr<absl::Time> t = FromTimestamp(ts, "time");
  if (!t.ok()) return "—";
  return absl::FormatTime("%Y-%m-%d %H:%M:%S UTC", *t, absl::UTCTimeZone());
}

std::string Fact(absl::string_view key, absl::string_view value_html) {
  return absl::StrCat("<div><span class=\"k\">", Html(key),
                      "</span><span class=\"v\">", value_html, "</span></div>");
}

std::string ResultWords(absl::string_view result) {
  if (result == "proposed") return "proposed: waiting for a person's approval";
  if (result == "promoted") return "promoted (refit mode auto)";
  if (result == "not_better") return "not better: nothing changed";
  return "failed: nothing changed";
}

std::string Panel(const std::string& svg) {
  return absl::StrCat("<div class=\"panel\">", svg, "</div>");
}

std::string EvidenceSection(const v1::Dossier& d, const DriftPolicy& policy) {
  std::string s = "<section id=\"trigger\"><h2>Trigger and drift evidence</h2>";
  absl::StrAppend(&s, "<p class=\"lead\">Started by <strong>",
                  Html(d.trigger()), "</strong>",
                  d.trigger_actor().empty()
                      ? ""
                      : absl::StrCat(" (", Html(d.trigger_actor()), ")"),
                  d.trigger_reason().empty()
                      ? "."
                      : absl::StrCat(": ", Html(d.trigger_reason())),
                  "</p>");
  if (!d.has_evidence() || d.evidence().windows().empty()) {
    absl::StrAppend(&s,
                    "<p class=\"lead\">No evaluation of the active version "
                    "was at hand when the job started.</p></section>");
    return s;
  }
  const v1::SetHealth& h = d.evidence();
  absl::StrAppend(
      &s, "<p class=\"lead\">The active version ", Html(h.version()), " was ",
      charts::StateBadge(LevelOf(h.state())), " at its last evaluation (",
      When(h.evaluated_at()), ").</p>");
  if (h.reasons_size() > 0) {
    absl::StrAppend(&s, "<ul class=\"reasons\">");
    for (const v1::DriftReason& r : h.reasons()) {
      absl::StrAppend(&s, "<li>", Html(r.text()), "</li>");
    }
    absl::StrAppend(&s, "</ul>");
  }
  absl::StrAppend(&s,
                  "<table><tr><th>figure</th><th class=\"num\">count "
                  "window</th><th class=\"num\">time window</th></tr>");
  for (const WindowFigure& f : kWindowFigures) {
    absl::StrAppend(&s, "<tr><td>", Html(f.metric), "</td>");
    for (const v1::WindowHealth& w : h.windows()) {
      const v1::Figure& fig = (w.*f.get)();
      absl::StrAppend(&s, "<td class=\"num\">",
                      fig.defined() ? N(fig.value()) : "n/a", "</td>");
    }
    absl::StrAppend(&s, "</tr>");
  }
  absl::StrAppend(&s, "</table>");
  charts::StabilityBars bars = StabilityBarsOf(h.windows(0).features(), policy,
                                               &h, h.windows(0).window());
  bars.text.id = "dossier-evidence-stability";
  bars.text.title = "Stability per feature when the job started";
  bars.text.subtitle = absl::StrCat("active version ", h.version(), ", ",
                                    h.windows(0).window(), " window");
  absl::StrAppend(&s, "<div class=\"grid\">",
                  Panel(ChartOrNote(charts::RenderStabilityBars(bars))),
                  "</div></section>");
  return s;
}

std::string DataSection(const v1::Dossier& d) {
  std::string s = "<section id=\"data\"><h2>Data</h2><div class=\"facts\">";
  absl::StrAppend(
      &s, Fact("fitted on", charts::CountText(d.training_records())),
      Fact("held out", charts::CountText(d.holdout_records())),
      Fact("unreadable", charts::CountText(d.unreadable_records())),
      Fact("holdout share", charts::PercentText(d.holdout_fraction())),
      Fact("first outcome", When(d.first_observed())),
      Fact("last outcome", When(d.last_observed())),
      Fact("margin", N(d.margin())), Fact("L2 penalty", N(d.l2())), "</div>");
  absl::StrAppend(
      &s,
      "<p class=\"lead\">Labelled records the active role scored, from "
      "plumbd's ledger. ",
      d.holdout_split() == "random_by_id"
          ? "A record is held out when the FNV-1a hash of its id (mixed by "
            "MurmurHash3's finalizer) falls below the holdout share: the "
            "same record always lands on the same side."
          : "The holdout is out of time: the most recent records by score "
            "time, after every record the candidate was fitted on.",
      d.ladder().window().empty()
          ? std::string()
          : absl::StrCat(" ", Html(d.ladder().window()), "."),
      "</p></section>");
  return s;
}

// The updating ladder: each rung's fit on the training part, its test
// against the active version, the closed test and the choice.
std::string LadderSection(const v1::RefitLadder& l) {
  std::string s = absl::StrCat(
      "<section id=\"ladder\"><h2>Updating ladder</h2><p class=\"lead\">",
      Html(absl::StrCat("Chose rung ", l.chosen(), ": ", l.reason())),
      "</p><table><tr><th>rung</th><th>update</th><th>log-likelihood</th>"
      "<th>df</th><th>LR vs active</th><th>p-value</th><th>note</th></tr>");
  absl::StrAppend(&s,
                  "<tr><td>0</td><td>the active version</td><td "
                  "class=\"num\">",
                  N(l.active_log_likelihood(), 8),
                  "</td><td class=\"num\">0</td><td></td><td></td><td>"
                  "</td></tr>");
  for (const v1::RefitLadder::Rung& r : l.rungs()) {
    absl::StrAppend(&s, "<tr data-rung=\"", r.rung(), "\"><td>", r.rung(),
                    "</td><td>", Html(r.name()), "</td><td class=\"num\">",
                    r.fitted() ? N(r.log_likelihood(), 8) : "not fitted",
                    "</td><td class=\"num\">", r.fitted() ? N(r.df()) : "",
                    "</td><td class=\"num\">",
                    r.fitted() ? N(r.lr_statistic()) : "",
                    "</td><td class=\"num\">", r.fitted() ? N(r.p_value()) : "",
                    "</td><td class=\"note\">", Html(r.note()), "</td></tr>");
  }
  absl::StrAppend(&s,
                  "</table><table><tr><th>closed test</th><th>LR</th>"
                  "<th>df</th><th>p-value</th><th>at alpha ",
                  N(l.alpha()), "</th></tr>");
  for (const v1::RefitLadder::Step& t : l.steps()) {
    absl::StrAppend(&s, "<tr><td>rung ", t.rung(), " vs ",
                    t.against() == 0 ? std::string("active")
                                     : absl::StrCat("rung ", t.against()),
                    "</td><td class=\"num\">", N(t.lr_statistic()),
                    "</td><td class=\"num\">", N(t.df()),
                    "</td><td class=\"num\">", N(t.p_value()), "</td><td>",
                    t.significant() ? "significant" : "not significant",
                    "</td></tr>");
  }
  absl::StrAppend(&s, "</table></section>");
  return s;
}

std::string HoldoutSection(const v1::Dossier& d) {
  const v1::HoldoutFigures& a = d.active_holdout();
  const v1::HoldoutFigures& c = d.candidate_holdout();
  std::string s =
      "<section id=\"holdout\"><h2>Holdout comparison</h2>"
      "<table><tr><th>figure</th><th class=\"num\">active ";
  absl::StrAppend(&s, Html(a.version()), "</th><th class=\"num\">candidate ",
                  Html(c.version()),
                  "</th><th class=\"num\">candidate − active</th></tr>");
  auto row = [&](absl::string_view name, double x, double y, bool has_x,
                 bool has_y, absl::string_view better) {
    absl::StrAppend(&s, "<tr><td>", Html(name), " <span class=\"note\">(",
                    Html(better), ")</span></td><td class=\"num\">",
                    Opt(has_x, x, 6), "</td><td class=\"num\">",
                    Opt(has_y, y, 6), "</td><td class=\"num\">",
                    has_x && has_y ? N(y - x, 4) : "—", "</td></tr>");
  };
  row("log-loss, nats per record", a.log_loss(), c.log_loss(), true, true,
      "lower is better");
  row("Brier score", a.brier_score(), c.brier_score(), true, true,
      "lower is better");
  row("AUC", a.auc(), c.auc(), a.has_auc(), c.has_auc(), "higher is better");
  absl::StrAppend(
      &s, "<tr><td>records / with the event</td><td class=\"num\">",
      charts::CountText(a.records()), " / ", charts::CountText(a.positives()),
      "</td><td class=\"num\">", charts::CountText(c.records()), " / ",
      charts::CountText(c.positives()), "</td><td></td></tr></table>");
  const v1::PairedLogLossDifference& p = d.paired();
  absl::StrAppend(
      &s,
      "<p class=\"lead\">Paired log-loss difference (candidate − active, "
      "per record, ",
      charts::CountText(p.records()), " records): <strong>",
      N(p.mean_difference(), 4), "</strong>, standard error ",
      N(p.standard_error(), 3), ", 95% interval <strong>", N(p.lower_95(), 4),
      " to ", N(p.upper_95(), 4),
      "</strong>. The candidate wins when the difference is at most −margin (",
      N(d.margin()), ") and the interval lies below zero: <strong>",
      p.candidate_wins() ? "it wins" : "it does not win", "</strong>.</p>");

  absl::StrAppend(&s, "<div class=\"grid\">");
  charts::ReliabilityDiagram r;
  r.text.id = "dossier-reliability";
  r.text.title = "Reliability on the holdout";
  r.text.subtitle = "10 equal-width bins of predicted probability";
  r.series.push_back(ReliabilitySeriesOf(absl::StrCat("active ", a.version()),
                                         a.reliability()));
  r.series.push_back(ReliabilitySeriesOf(
      absl::StrCat("candidate ", c.version()), c.reliability()));
  absl::StrAppend(&s, Panel(ChartOrNote(charts::RenderReliabilityDiagram(r))));
  charts::RocChart roc;
  roc.text.id = "dossier-roc";
  roc.text.title = "ROC curves on the holdout";
  roc.text.subtitle =
      absl::StrCat("drawn with ", a.roc_size(), " of ", a.roc_points(), " and ",
                   c.roc_size(), " of ", c.roc_points(), " points");
  for (const v1::HoldoutFigures* h : {&a, &c}) {
    charts::RocCurve curve;
    curve.name = absl::StrCat(h == &a ? "active " : "candidate ", h->version());
    for (const v1::RocPoint& pt : h->roc()) {
      curve.points.push_back(
          {pt.false_positive_rate(), pt.true_positive_rate()});
    }
    curve.auc = h->has_auc() ? h->auc() : charts::kUndefined;
    roc.curves.push_back(std::move(curve));
  }
  absl::StrAppend(&s, Panel(ChartOrNote(charts::RenderRocCurves(roc))));
  for (const v1::HoldoutFigures* h : {&a, &c}) {
    const bool active = h == &a;
    charts::BaselineHistogram hist = HistogramOf(h->score_shares());
    hist.text.id = active ? "dossier-score-active" : "dossier-score-candidate";
    hist.text.title = absl::StrCat(
        "Holdout scores, ", active ? "active " : "candidate ", h->version());
    hist.text.subtitle = "against the version's own score baseline";
    hist.value_label = "predicted probability";
    hist.window_name = "holdout";
    hist.baseline_name = "training baseline";
    absl::StrAppend(&s,
                    Panel(ChartOrNote(charts::RenderBaselineHistogram(hist))));
  }
  absl::StrAppend(&s, "</div></section>");
  return s;
}

std::string StabilitySection(const v1::Dossier& d, const DriftPolicy& policy) {
  std::string s =
      "<section id=\"stability\"><h2>Stability per feature</h2><p "
      "class=\"lead\">The job's records (fitted and held out) against the "
      "active version's feature baselines: how far the population moved "
      "since the active version was fitted.</p><div class=\"grid\">";
  google::protobuf::RepeatedPtrField<v1::FeatureHealth> features(
      d.stability().begin(), d.stability().end());
  charts::StabilityBars bars = StabilityBarsOf(features, policy, nullptr, "");
  bars.text.id = "dossier-stability";
  bars.text.title = "Population stability index per feature";
  bars.text.subtitle =
      absl::StrCat("job records against active version ", d.active_version());
  absl::StrAppend(&s, Panel(ChartOrNote(charts::RenderStabilityBars(bars))),
                  "</div><table><tr><th>feature</th><th class=\"num\">PSI</th>"
                  "<th class=\"num\">missing</th><th class=\"num\">out of "
                  "range</th></tr>");
  for (const v1::FeatureHealth& f : d.stability()) {
    auto cell = [](const v1::Figure& fig) {
      return fig.defined() ? N(fig.value()) : absl::StrCat("n/a");
    };
    absl::StrAppend(
        &s, "<tr><td>", Html(f.feature()), "</td><td class=\"num\">",
        cell(f.psi()), "</td><td class=\"num\">", cell(f.missing_rate()),
        "</td><td class=\"num\">", cell(f.out_of_range_rate()), "</td></tr>");
  }
  absl::StrAppend(&s, "</table></section>");
  return s;
}

std::string CoefficientSection(const v1::VersionDiff& diff) {
  std::string s = absl::StrCat(
      "<section id=\"coefficients\"><h2>Coefficients: candidate ",
      Html(diff.to().version()), " against active ",
      Html(diff.from().version()),
      "</h2><p class=\"lead\">Change in standard errors = change / the active "
      "version's standard error. Numeric coefficients act on (x − centre) / "
      "scale: when the centre or scale was learned again, compare the "
      "effects per unit, not the raw coefficients.</p>"
      "<table><tr><th>coefficient</th><th class=\"num\">active</th><th "
      "class=\"num\">s.e.</th><th class=\"num\">candidate</th><th "
      "class=\"num\">s.e.</th><th class=\"num\">change</th><th "
      "class=\"num\">change in s.e.</th><th>status</th></tr>");
  for (const v1::CoefficientChange& c : diff.coefficients()) {
    const bool big = c.has_change_in_standard_errors() &&
                     std::fabs(c.change_in_standard_errors()) >= 2;
    absl::StrAppend(
        &s, big ? "<tr class=\"worse\">" : "<tr>", "<td>", Html(c.label()),
        "</td><td class=\"num\">",
        Opt(c.has_from_estimate(), c.from_estimate()),
        "</td><td class=\"num\">",
        Opt(c.has_from_standard_error(), c.from_standard_error(), 3),
        "</td><td class=\"num\">", Opt(c.has_to_estimate(), c.to_estimate()),
        "</td><td class=\"num\">",
        Opt(c.has_to_standard_error(), c.to_standard_error(), 3),
        "</td><td class=\"num\">", Opt(c.has_change(), c.change()),
        "</td><td class=\"num\">",
        Opt(c.has_change_in_standard_errors(), c.change_in_standard_errors(),
            3),
        "</td><td>", Html(c.status()), "</td></tr>");
  }
  absl::StrAppend(&s,
                  "</table><h3>Transforms, levels and baselines</h3><table>"
                  "<tr><th>feature</th><th>status</th><th>what changed</th>"
                  "<th class=\"num\">baseline PSI</th></tr>");
  for (const v1::FeatureChange& f : diff.features()) {
    std::string what;
    for (const std::string& c : f.changes()) {
      absl::StrAppend(&what, what.empty() ? "" : "; ", c);
    }
    absl::StrAppend(&s, "<tr><td>", Html(f.feature()), "</td><td>",
                    Html(f.status()), "</td><td>", Html(what),
                    "</td><td class=\"num\">",
                    Opt(f.has_baseline_psi(), f.baseline_psi()), "</td></tr>");
  }
  absl::StrAppend(&s, "</table><p class=\"lead\">Score baseline PSI: ",
                  Opt(diff.has_score_baseline_psi(), diff.score_baseline_psi()),
                  diff.has_score_baseline_psi()
                      ? ""
                      : " (the two baselines have different bins)",
                  ".</p></section>");
  return s;
}

std::string FitSection(const v1::VersionDiff& diff) {
  std::string s =
      "<section id=\"fit\"><h2>Fit statistics</h2><table><tr><th></th><th>"
      "active ";
  absl::StrAppend(&s, Html(diff.from().version()), "</th><th>candidate ",
                  Html(diff.to().version()), "</th></tr>");
  auto row = [&](absl::string_view k, const std::string& a,
                 const std::string& b) {
    absl::StrAppend(&s, "<tr><td>", Html(k), "</td><td>", Html(a), "</td><td>",
                    Html(b), "</td></tr>");
  };
  const v1::FitSummary &a = diff.from_fit(), &b = diff.to_fit();
  row("method", a.method(), b.method());
  row("created by", a.created_by(), b.created_by());
  row("training data", a.training_data(), b.training_data());
  row("training rows", absl::StrCat(a.training_rows()),
      absl::StrCat(b.training_rows()));
  row("training log-loss", N(a.training_log_loss(), 6),
      N(b.training_log_loss(), 6));
  row("log-likelihood", N(a.log_likelihood(), 8), N(b.log_likelihood(), 8));
  row("null log-likelihood",
      Opt(a.has_null_log_likelihood(), a.null_log_likelihood(), 8),
      Opt(b.has_null_log_likelihood(), b.null_log_likelihood(), 8));
  row("AIC", Opt(a.has_aic(), a.aic(), 8), Opt(b.has_aic(), b.aic(), 8));
  row("McFadden pseudo-R²", Opt(a.has_pseudo_r2(), a.pseudo_r2()),
      Opt(b.has_pseudo_r2(), b.pseudo_r2()));
  absl::StrAppend(&s, "</table></section>");
  return s;
}

std::string TrailSection(const v1::Dossier& d) {
  std::string s = absl::StrCat(
      "<section id=\"trail\"><h2>Approval trail</h2><p class=\"lead\">As "
      "of ",
      When(d.trail_as_of()),
      ". A candidate serves only after a person approves it (plumbctl "
      "approve); the entries below are the ledger's audit rows of this job "
      "and of its candidate.</p><table><tr><th>when (UTC)</th><th>version"
      "</th><th>action</th><th>actor</th><th>detail</th></tr>");
  for (const v1::AuditEntry& e : d.trail()) {
    absl::StrAppend(&s, "<tr><td class=\"num\">", When(e.at()), "</td><td>",
                    Html(e.version()), "</td><td>", Html(e.action()),
                    "</td><td>", Html(e.actor()), "</td><td class=\"note\">",
                    Html(e.detail()), "</td></tr>");
  }
  if (d.trail().empty()) {
    absl::StrAppend(&s, "<tr><td colspan=\"5\">no entries</td></tr>");
  }
  absl::StrAppend(&s, "</table></section>");
  return s;
}

}  // namespace

std::string RenderDossier(const v1::Dossier& d, const DriftPolicy& policy) {
  std::string body = "<section id=\"outcome\"><h2>Outcome</h2>";
  absl::StrAppend(
      &body, "<div class=\"facts\">",
      Fact("result", absl::StrCat("<strong data-result=\"",
                                  charts::HtmlAttribute(d.result()), "\">",
                                  Html(ResultWords(d.result())), "</strong>")),
      Fact("active version", Html(d.active_version())),
      Fact("candidate version", d.candidate_version().empty()
                                    ? "none fitted"
                                    : Html(d.candidate_version())),
      Fact("started", When(d.started_at())),
      Fact("finished", When(d.finished_at())), "</div>");
  absl::StrAppend(&body, "<p class=\"lead\">", Html(d.summary()),
                  "</p></section>");
  absl::StrAppend(&body, EvidenceSection(d, policy), DataSection(d));
  if (d.has_ladder()) absl::StrAppend(&body, LadderSection(d.ladder()));
  if (!d.candidate_version().empty()) {
    absl::StrAppend(&body, HoldoutSection(d));
  }
  if (!d.stability().empty()) {
    absl::StrAppend(&body, StabilitySection(d, policy));
  }
  if (!d.candidate_version().empty()) {
    absl::StrAppend(&body, CoefficientSection(d.diff()), FitSection(d.diff()));
  }
  absl::StrAppend(&body, TrailSection(d));
  charts::HtmlPageOptions o;
  o.kind = "refit dossier";
  o.title = absl::StrCat("Refit of ", d.set(), ", job ", d.job());
  o.subtitle =
      absl::StrCat("result: ", d.result(), " · active ", d.active_version(),
                   d.candidate_version().empty()
                       ? ""
                       : absl::StrCat(" · candidate ", d.candidate_version()),
                   " · finished ", When(d.finished_at()));
  o.footer = absl::StrCat(
      "Written by plumbd's refit job ", d.job(), " for set ", d.set(),
      ". Self-contained: no script, font or link to anywhere else. Figures "
      "from plumbd's monitor and refit code (checked against scikit-learn "
      "and SciPy in its tests).");
  return charts::HtmlPage(o, body);
}

}  // namespace plumbline::daemon

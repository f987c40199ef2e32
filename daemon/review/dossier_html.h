// File: daemon/review/dossier_html.h
//
// The refit dossier as one self-contained HTML document: inline stylesheet
// and SVG charts (daemon/charts), no script, font, image or link to
// anywhere else, readable offline and printable. Sections, in the order a
// validator reads them: outcome and trigger with the drift evidence, the
// data (training and holdout counts and windows), the holdout comparison
// (log-loss, Brier score, AUC, the paired difference with its interval;
// reliability diagrams of both versions, ROC curves, score distributions
// against the baselines), stability per feature, the coefficient table and
// its diff against the active version, the fit statistics, and the
// approval trail. Every chart's numbers are also in a table or in its data-
// attributes; every state is written in words.
//
//   std::string html = RenderDossier(dossier, policy);
//
// Thread-safe: pure function.
#ifndef PLUMBLINE_DAEMON_REVIEW_DOSSIER_HTML_H_
#define PLUMBLINE_DAEMON_REVIEW_DOSSIER_HTML_H_

#include <string>

#include "daemon/policy/drift_policy.h"
#include "plumbline/v1/registry.pb.h"

namespace plumbline::daemon {

// Chart ids every dossier with a fitted candidate holds (tests look for
// them in the browser's DOM).
inline constexpr const char* kDossierChartIds[] = {
    "dossier-reliability", "dossier-roc", "dossier-score-active",
    "dossier-score-candidate", "dossier-stability"};

std::string RenderDossier(const v1::Dossier& dossier,
                          const DriftPolicy& policy);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_REVIEW_DOSSIER_HTML_H_

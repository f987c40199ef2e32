// File: daemon/cli/fit.h
//
// `plumbctl fit`: fits a logistic model to a CSV file by maximum likelihood
// (optionally L2-penalised) and writes it as a coefficient-set file that
// plumbd loads. The CSV is typed by daemon/csv/training.h; the transforms
// (centre and scale of numeric columns, levels of categorical ones), the
// baselines and the fit come from scorer/design_matrix.h, scorer/fit.h and
// scorer/design_set.h.
//
// Output on `out`: the feature transforms, the coefficient table (estimate,
// standard error, Wald z and p-value per design column, intercept first;
// estimates only for penalised fits, whose standard errors are not sampling
// standard errors), the fit statistics (rows, log-likelihood, null
// log-likelihood, deviance, AIC, McFadden pseudo-R^2, iterations,
// convergence) and the path written. On `err`: the missing-data table
// (column, missing cells, share, rule) before anything else, then the
// progress lines (see FitProgressLines). Missing cells of a feature whose
// rule is reject (the default) fail the command after the table. Any failure
// (bad file or flags, data that cannot identify the model, no convergence)
// returns a status naming the column or row and writes nothing; an existing
// --out file is left as it was.
//
//   FitCommandOptions options;
//   options.csv = "parcels.csv";
//   options.columns.target = "failed";
//   options.out = "sets/parcels.json";
//   options.name = "parcels";
//   absl::Status s = RunFitCommand(options, std::cout, std::cerr);
//
// Thread-safe: no shared state, but it writes to the given streams.
#ifndef PLUMBLINE_DAEMON_CLI_FIT_H_
#define PLUMBLINE_DAEMON_CLI_FIT_H_

#include <functional>
#include <ostream>
#include <string>

#include "absl/status/status.h"
#include "absl/time/clock.h"
#include "absl/time/time.h"
#include "daemon/csv/training.h"

namespace plumbline::daemon {

// When the per-iteration progress lines ("fit: iteration 3: log-likelihood
// ..., max |gradient| ...") are written. A fit of a few thousand rows takes
// milliseconds and needs none; plumbctl's main passes kAlways when stderr is
// a terminal and kAfterOneSecond otherwise.
enum class FitProgressLines {
  kAfterOneSecond,  // only iterations ending > 1 s after the command started
  kAlways,
  kNever,
};

struct FitCommandOptions {
  // CSV file with a header row; required.
  std::string csv;
  // Target, weights, features and forced categorical columns.
  TrainingColumns columns;
  // L2 penalty lambda >= 0 on the coefficients of the standardised design
  // (never the intercept); 0 = plain maximum likelihood. scikit-learn's
  // LogisticRegression(C=c) is lambda = 1 / c (see scorer/fit.h).
  double l2 = 0;
  // Set file to write; required.
  std::string out;
  // Set name, [A-Za-z0-9_.-]+; required.
  std::string name;
  // Set version; empty = DefaultFitVersion(now()).
  std::string version;
  FitProgressLines progress = FitProgressLines::kAfterOneSecond;
  // Clock for provenance.created_at, the default version and the progress
  // delay.
  std::function<absl::Time()> now = [] { return absl::Now(); };
};

// "fit-" + the UTC time as YYYYMMDDTHHMMSSZ, e.g. "fit-20261202T093000Z".
std::string DefaultFitVersion(absl::Time t);

// Runs the command; see the file comment.
absl::Status RunFitCommand(const FitCommandOptions& options, std::ostream& out,
                           std::ostream& err);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_CLI_FIT_H_

// File: daemon/cli/fit.cc
#include "daemon/cli/fit.h"

#include <cmath>
#include <filesystem>
#include <system_error>
#include <utility>
#include <vector>

#include "absl/status/statusor.h"
#include "absl/strings/str_cat.h"
#include "absl/strings/str_format.h"
#include "absl/strings/str_join.h"
#include "absl/strings/str_replace.h"
#include "daemon/csv/table.h"
#include "daemon/util/files.h"
#include "daemon/util/text_table.h"
#include "scorer/coefficient_set.h"
#include "scorer/design_matrix.h"
#include "scorer/design_set.h"
#include "scorer/fit.h"

namespace plumbline::daemon {
namespace {

// Estimates, standard errors and z need 8+ significant digits to be
// compared with another program's output; p-values and the fit statistics
// are read by people.
std::string Estimate(double v) { return absl::StrFormat("%.9g", v); }
std::string PValue(double v) { return absl::StrFormat("%.6g", v); }
std::string Statistic(double v) { return absl::StrFormat("%.10g", v); }

// The fitter's advice names its own option; on this command line it is a
// flag.
absl::Status InCommandTerms(const absl::Status& status,
                            absl::string_view source) {
  return absl::Status(
      status.code(),
      absl::StrCat(source, ": ",
                   absl::StrReplaceAll(status.message(),
                                       {{"(l2_lambda > 0)", "(--l2 LAMBDA)"},
                                        {"l2_lambda", "--l2"}})));
}

absl::Status CheckOptions(const FitCommandOptions& options,
                          const std::string& version) {
  if (options.csv.empty()) {
    return absl::InvalidArgumentError("fit needs --csv FILE");
  }
  if (options.columns.target.empty()) {
    return absl::InvalidArgumentError("fit needs --target COLUMN");
  }
  if (options.out.empty()) {
    return absl::InvalidArgumentError("fit needs --out SET.json");
  }
  if (!std::isfinite(options.l2) || options.l2 < 0) {
    return absl::InvalidArgumentError(
        absl::StrCat("--l2 must be a finite number >= 0, got ", options.l2));
  }
  // Name and version are checked before the work, not after it.
  v1::CoefficientSet bare;
  bare.set_name(options.name);
  bare.set_version(version);
  return scorer::ValidateCoefficientSet(bare, "--name/--version");
}

std::string AbsolutePath(const std::string& path) {
  std::error_code ec;
  std::filesystem::path absolute = std::filesystem::absolute(path, ec);
  return ec ? path : absolute.lexically_normal().string();
}

// One line per feature: how its raw value becomes design columns.
std::string TransformTable(const v1::CoefficientSet& set) {
  std::vector<std::vector<std::string>> rows = {
      {"feature", "kind", "transform"}};
  for (const v1::Feature& f : set.features()) {
    if (f.has_numeric()) {
      rows.push_back(
          {f.name(), "numeric",
           absl::StrFormat("centre %.9g, scale %.9g", f.numeric().center(),
                           f.numeric().scale())});
    } else if (f.has_categorical()) {
      std::vector<std::string> levels;
      for (const auto& level : f.categorical().levels()) {
        levels.push_back(level.value());
      }
      rows.push_back(
          {f.name(), "categorical",
           absl::StrCat("levels ", absl::StrJoin(levels, ", "), "; reference ",
                        f.categorical().reference_level())});
    } else {
      rows.push_back({f.name(), "binned", ""});
    }
  }
  return FormatTable(rows);
}

std::string CoefficientTable(const scorer::DesignLayout& layout,
                             const scorer::FitResult& fit) {
  std::vector<std::vector<std::string>> rows;
  if (fit.penalized) {
    rows.push_back({"column", "estimate"});
    rows.push_back({"intercept", Estimate(fit.intercept)});
    for (int j = 0; j < layout.num_columns(); ++j) {
      rows.push_back({layout.column_names()[static_cast<size_t>(j)],
                      Estimate(fit.coefficients[j])});
    }
    return FormatTable(rows);
  }
  rows.push_back({"column", "estimate", "std_error", "z", "p_value"});
  rows.push_back({"intercept", Estimate(fit.intercept),
                  Estimate(fit.intercept_standard_error),
                  Estimate(fit.intercept_z), PValue(fit.intercept_p_value)});
  for (int j = 0; j < layout.num_columns(); ++j) {
    rows.push_back({layout.column_names()[static_cast<size_t>(j)],
                    Estimate(fit.coefficients[j]),
                    Estimate(fit.standard_errors[j]), Estimate(fit.z[j]),
                    PValue(fit.p_values[j])});
  }
  return FormatTable(rows);
}

std::string StatisticsTable(const scorer::FitResult& fit, bool weighted) {
  std::vector<std::vector<std::string>> rows;
  rows.push_back({"rows", absl::StrCat(fit.rows)});
  if (weighted) rows.push_back({"weight sum", Statistic(fit.weight_sum)});
  rows.push_back({"log-likelihood", Statistic(fit.log_likelihood)});
  if (fit.penalized) {
    rows.push_back(
        {"penalised log-likelihood", Statistic(fit.penalized_log_likelihood)});
  }
  rows.push_back({"null log-likelihood", Statistic(fit.null_log_likelihood)});
  rows.push_back({"deviance", Statistic(fit.deviance)});
  rows.push_back({"AIC", Statistic(fit.aic)});
  rows.push_back({"McFadden pseudo-R^2", Statistic(fit.pseudo_r2)});
  rows.push_back({"iterations", absl::StrCat(fit.iterations)});
  rows.push_back(
      {"converged", absl::StrFormat("yes (max |gradient| per unit weight %.3g)",
                                    fit.max_abs_gradient)});
  return FormatTable(rows);
}

std::string Report(const FitCommandOptions& options,
                   const scorer::DesignLayout& layout,
                   const scorer::FitResult& fit,
                   const v1::CoefficientSet& set) {
  std::string text = absl::StrFormat(
      "fit of P(%s = 1) on %d rows of %s by %s\n\n", options.columns.target,
      fit.rows, options.csv, set.provenance().method());
  absl::StrAppend(&text, TransformTable(set), "\n");
  bool any_numeric = false;
  for (const v1::Feature& f : set.features()) any_numeric |= f.has_numeric();
  if (any_numeric) {
    absl::StrAppend(&text,
                    "Numeric columns enter centred and scaled: their "
                    "estimates are per standard\ndeviation.\n");
  }
  absl::StrAppend(&text, CoefficientTable(layout, fit), "\n");
  if (fit.penalized) {
    absl::StrAppend(
        &text,
        absl::StrFormat(
            "Standard errors, z and p-values are not reported for a "
            "penalised fit: the L2\npenalty (lambda %g) shrinks and biases "
            "the estimates, so the inverse of the\npenalised information "
            "matrix is not their sampling variance.\n\n",
            fit.l2_lambda));
  }
  absl::StrAppend(&text,
                  StatisticsTable(fit, !options.columns.weights.empty()));
  return text;
}

}  // namespace

std::string DefaultFitVersion(absl::Time t) {
  return absl::StrCat(
      "fit-", absl::FormatTime("%Y%m%dT%H%M%SZ", t, absl::UTCTimeZone()));
}

absl::Status RunFitCommand(const FitCommandOptions& options, std::ostream& out,
                           std::ostream& err) {
  const absl::Time started = options.now();
  const std::string version =
      options.version.empty() ? DefaultFitVersion(started) : options.version;
  if (absl::Status st = CheckOptions(options, version); !st.ok()) return st;

  absl::StatusOr<std::string> text = ReadFileToString(options.csv);
  if (!text.ok()) return text.status();
  absl::StatusOr<CsvTable> table = ParseCsv(*text, options.csv);
  if (!table.ok()) return table.status();
  absl::StatusOr<TrainingData> data =
      TrainingDataFromCsv(*table, options.columns, options.csv);
  if (!data.ok()) return data.status();
  err << "missing values (blank cells"
      << (options.columns.missing.tokens().empty() ? "" : " and --na tokens")
      << "):\n"
      << MissingTable(*data);
  if (absl::Status st = CheckMissingRules(*data, options.csv); !st.ok()) {
    return st;
  }

  absl::StatusOr<scorer::DesignLayout> layout =
      scorer::DesignLayout::Learn(data->specs, data->records);
  if (!layout.ok()) return InCommandTerms(layout.status(), options.csv);
  absl::StatusOr<scorer::RowMatrix> x = layout->Encode(data->records);
  if (!x.ok()) return InCommandTerms(x.status(), options.csv);

  scorer::FitOptions fit_options;
  fit_options.l2_lambda = options.l2;
  bool printing = options.progress == FitProgressLines::kAlways;
  fit_options.progress = [&](const scorer::FitProgress& p) {
    if (options.progress == FitProgressLines::kNever) return;
    if (!printing && options.now() - started > absl::Seconds(1)) {
      printing = true;
    }
    if (!printing) return;
    err << absl::StrFormat(
        "fit: iteration %d: log-likelihood %.10g, max |gradient| %.3g%s\n",
        p.iteration, p.log_likelihood, p.max_abs_gradient,
        p.step_halvings > 0
            ? absl::StrCat(", step halved ", p.step_halvings,
                           p.step_halvings == 1 ? " time" : " times")
            : "");
    err.flush();
  };
  absl::StatusOr<scorer::FitResult> fit = scorer::FitLogistic(
      *x, data->labels, data->weights, layout->column_names(), fit_options);
  if (!fit.ok()) return InCommandTerms(fit.status(), options.csv);
  if (!fit->converged) {
    return absl::FailedPreconditionError(
        absl::StrCat(options.csv, ": the fit did not converge after ",
                     fit->iterations, " iterations: ", fit->stop_reason, "; ",
                     options.out, " was not written"));
  }

  scorer::SetDescription description;
  description.name = options.name;
  description.version = version;
  description.description =
      absl::StrCat("P(", options.columns.target,
                   " = 1), fitted by plumbctl fit on ", options.csv);
  description.created_by = "plumbctl fit";
  description.training_data = absl::StrCat(
      "CSV file ", AbsolutePath(options.csv), ": ", fit->rows,
      " rows, target column '", options.columns.target, "'",
      options.columns.weights.empty()
          ? ""
          : absl::StrCat(", weights column '", options.columns.weights, "'"));
  description.created_at = started;
  absl::StatusOr<v1::CoefficientSet> set =
      scorer::CoefficientSetFromFit(*layout, *fit, description);
  if (!set.ok()) return set.status();
  absl::StatusOr<std::string> json = scorer::CoefficientSetToJson(*set);
  if (!json.ok()) return json.status();

  out << Report(options, *layout, *fit, *set) << "\n";
  if (absl::Status st = WriteFileAtomically(options.out, *json); !st.ok()) {
    return st;
  }
  out << "wrote set " << set->name() << " version " << set->version() << " to "
      << options.out << "\n";
  return absl::OkStatus();
}

}  // namespace plumbline::daemon

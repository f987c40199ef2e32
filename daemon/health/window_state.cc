// File: daemon/health/window_state.cc
#include "daemon/health/window_state.h"

#include <array>
#include <cmath>
#include <cstring>
#include <map>
#include <optional>
#include <type_traits>
#include <utility>

#include "absl/strings/str_cat.h"
#include "absl/strings/str_format.h"
#include "absl/strings/str_join.h"
#include "absl/strings/str_split.h"
#include "daemon/health/windows.h"
#include "daemon/util/caller_text.h"

namespace plumbline::daemon {
namespace {

using State = v1::HealthWindowsState;

absl::Status Bad(absl::string_view where, absl::string_view what) {
  return absl::InvalidArgumentError(absl::StrCat(where, ": ", what));
}

// ---- labelled buckets ----

void SaveSum(const monitor::CompensatedSum& s, State::Sum* out) {
  out->set_sum(s.sum());
  out->set_compensation(s.compensation());
}

monitor::CompensatedSum LoadSum(const State::Sum& s) {
  return monitor::CompensatedSum::FromParts(s.sum(), s.compensation());
}

void SaveBucket(const LabelledAccumulator& acc, State::LabelledBucket* out) {
  const monitor::OutcomeAccumulator& streaming = acc.streaming();
  const monitor::LossAccumulator::State loss = streaming.loss().state();
  out->set_count(loss.count);
  out->set_positives(loss.positives);
  SaveSum(loss.loss, out->mutable_loss());
  SaveSum(loss.squared_error, out->mutable_squared_error());
  SaveSum(loss.predicted, out->mutable_predicted());
  for (const monitor::BinSums& b : streaming.fixed_bins().bins()) {
    out->add_bin_counts(b.count);
    out->add_bin_positives(b.positives);
    out->add_bin_predicted_sum(b.predicted.sum());
    out->add_bin_predicted_compensation(b.predicted.compensation());
  }
  int previous = -1;
  for (const auto& c : streaming.grid().state().cells) {
    out->add_cell_steps(static_cast<uint32_t>(c.cell - previous));
    previous = c.cell;
    out->add_cell_positives(c.positives);
    out->add_cell_negatives(c.negatives);
    out->add_cell_predicted_sum(c.predicted.sum());
    out->add_cell_predicted_compensation(c.predicted.compensation());
  }
  const monitor::LabelledRecordStore& store = acc.store();
  State::Records* records = out->mutable_records();
  records->mutable_log_odds()->Add(store.log_odds().begin(),
                                   store.log_odds().end());
  records->set_labels(PackLabels(store.labels()));
  records->set_refused(store.refused());
}

// `empty` is the window's empty bucket: it bounds the sizes.
absl::StatusOr<LabelledAccumulator> LoadBucket(const State::LabelledBucket& b,
                                               const LabelledAccumulator& empty,
                                               absl::string_view where) {
  const size_t bins = empty.streaming().fixed_bins().bins().size();
  if (static_cast<size_t>(b.bin_counts_size()) != bins ||
      static_cast<size_t>(b.bin_positives_size()) != bins ||
      static_cast<size_t>(b.bin_predicted_sum_size()) != bins ||
      static_cast<size_t>(b.bin_predicted_compensation_size()) != bins) {
    return Bad(where, absl::StrFormat(
                          "reliability bins: %d counts, %d positives, %d sums "
                          "and %d compensations; the table has %d bins",
                          b.bin_counts_size(), b.bin_positives_size(),
                          b.bin_predicted_sum_size(),
                          b.bin_predicted_compensation_size(), bins));
  }
  const int cells = empty.streaming().grid().grid().num_cells();
  const int n = b.cell_steps_size();
  if (n > cells || b.cell_positives_size() != n ||
      b.cell_negatives_size() != n || b.cell_predicted_sum_size() != n ||
      b.cell_predicted_compensation_size() != n) {
    return Bad(where, absl::StrFormat(
                          "score grid: %d steps, %d positives, %d "
                          "negatives, %d sums and %d compensations; "
                          "there must be one of each per non-empty cell, "
                          "at most %d",
                          n, b.cell_positives_size(), b.cell_negatives_size(),
                          b.cell_predicted_sum_size(),
                          b.cell_predicted_compensation_size(), cells));
  }
  const State::Records& r = b.records();
  const int64_t capacity = empty.store().capacity();
  if (r.log_odds_size() > capacity) {
    return Bad(where, absl::StrFormat("records: %d kept; the store's capacity "
                                      "is %d",
                                      r.log_odds_size(), capacity));
  }
  absl::StatusOr<std::vector<int8_t>> labels =
      UnpackLabels(r.labels(), static_cast<size_t>(r.log_odds_size()),
                   absl::StrCat(where, ": records.labels"));
  if (!labels.ok()) return labels.status();

  monitor::OutcomeAccumulator::State streaming;
  streaming.loss = {b.count(), b.positives(), LoadSum(b.loss()),
                    LoadSum(b.squared_error()), LoadSum(b.predicted())};
  streaming.fixed_bins.resize(bins);
  for (size_t i = 0; i < bins; ++i) {
    const int j = static_cast<int>(i);
    streaming.fixed_bins[i].count = b.bin_counts(j);
    streaming.fixed_bins[i].positives = b.bin_positives(j);
    streaming.fixed_bins[i].predicted = monitor::CompensatedSum::FromParts(
        b.bin_predicted_sum(j), b.bin_predicted_compensation(j));
  }
  streaming.grid.cells.resize(static_cast<size_t>(n));
  int64_t cell = -1;
  for (int i = 0; i < n; ++i) {
    cell += b.cell_steps(i);
    if (b.cell_steps(i) == 0 || cell >= cells) {
      return Bad(where, absl::StrFormat("score grid: cell_steps[%d] is %d, "
                                        "which is not a step to a next cell "
                                        "of the %d",
                                        i, b.cell_steps(i), cells));
    }
    auto& c = streaming.grid.cells[static_cast<size_t>(i)];
    c.cell = static_cast<int>(cell);
    c.positives = b.cell_positives(i);
    c.negatives = b.cell_negatives(i);
    c.predicted = monitor::CompensatedSum::FromParts(
        b.cell_predicted_sum(i), b.cell_predicted_compensation(i));
  }
  monitor::LabelledRecordStore::State store;
  store.refused = r.refused();
  store.log_odds.assign(r.log_odds().begin(), r.log_odds().end());
  store.labels = *std::move(labels);

  LabelledAccumulator acc = empty;
  if (absl::Status s = acc.Restore(std::move(streaming), std::move(store));
      !s.ok()) {
    return Bad(where, s.message());
  }
  return acc;
}

// ---- scored buckets ----

void SaveCounts(const monitor::StabilityCounts& c,
                State::StabilityCounts* out) {
  out->mutable_bins()->Add(c.bins.begin(), c.bins.end());
  out->set_missing(c.missing);
  out->set_out_of_range(c.out_of_range);
}

absl::StatusOr<monitor::StabilityCounts> LoadCounts(
    const State::StabilityCounts& saved, const monitor::StabilityCounts& shape,
    absl::string_view where) {
  if (saved.bins_size() != static_cast<int>(shape.bins.size())) {
    return Bad(where, absl::StrFormat("%d bin counts; the baseline has %d bins",
                                      saved.bins_size(), shape.bins.size()));
  }
  monitor::StabilityCounts c;
  c.bins.assign(saved.bins().begin(), saved.bins().end());
  c.missing = saved.missing();
  c.out_of_range = saved.out_of_range();
  return c;
}

void SaveBucket(const ScoredAccumulator& acc, State::ScoredBucket* out) {
  out->set_count(acc.count());
  if (const monitor::StabilityCounts* score = acc.score_counts()) {
    SaveCounts(*score, out->mutable_score());
  }
  for (size_t i = 0; i < acc.num_features(); ++i) {
    SaveCounts(acc.feature_counts(i), out->add_features());
  }
}

absl::StatusOr<ScoredAccumulator> LoadBucket(const State::ScoredBucket& b,
                                             const ScoredAccumulator& empty,
                                             absl::string_view where) {
  if (static_cast<size_t>(b.features_size()) != empty.num_features()) {
    return Bad(where, absl::StrFormat("%d features; the set has %d",
                                      b.features_size(), empty.num_features()));
  }
  std::optional<monitor::StabilityCounts> score;
  if (b.has_score() != (empty.score_counts() != nullptr)) {
    return Bad(where, b.has_score() ? "score counts, but the set has no usable "
                                      "score baseline"
                                    : "no score counts, but the set has a "
                                      "score baseline");
  }
  if (b.has_score()) {
    absl::StatusOr<monitor::StabilityCounts> c = LoadCounts(
        b.score(), *empty.score_counts(), absl::StrCat(where, ": score"));
    if (!c.ok()) return c.status();
    score = *std::move(c);
  }
  std::vector<monitor::StabilityCounts> features;
  features.reserve(empty.num_features());
  for (int i = 0; i < b.features_size(); ++i) {
    absl::StatusOr<monitor::StabilityCounts> c =
        LoadCounts(b.features(i), empty.feature_counts(static_cast<size_t>(i)),
                   absl::StrCat(where, ": features[", i, "]"));
    if (!c.ok()) return c.status();
    features.push_back(*std::move(c));
  }
  ScoredAccumulator acc = empty;
  if (absl::Status s =
          acc.Restore(b.count(), std::move(score), std::move(features));
      !s.ok()) {
    return Bad(where, s.message());
  }
  return acc;
}

// ---- rings ----

template <typename Window, typename Message>
void SaveRing(const Window& window, Message* out) {
  for (int s = 0; s < window.buckets(); ++s) {
    out->add_fill(window.fill(s));
    if (window.fill(s) > 0) SaveBucket(window.bucket(s), out->add_buckets());
  }
}

// The buckets of `saved` as one accumulator per slot (the empty one where
// fill is 0), after the checks on sizes every ring shares.
template <typename Window, typename Message>
absl::StatusOr<
    std::vector<std::decay_t<decltype(std::declval<Window>().empty())>>>
LoadBuckets(const Message& saved, absl::string_view name, const Window& window,
            bool numbered) {
  const int k = window.buckets();
  if (saved.fill_size() != k) {
    return Bad(name, absl::StrFormat("%d fills; the window has %d buckets",
                                     saved.fill_size(), k));
  }
  int used = 0;
  for (int s = 0; s < k; ++s) {
    if (saved.fill(s) < 0) {
      return Bad(name, absl::StrFormat("fill[%d] is %d", s, saved.fill(s)));
    }
    used += saved.fill(s) > 0 ? 1 : 0;
  }
  if (saved.buckets_size() != used) {
    return Bad(name, absl::StrFormat("%d buckets for %d slots holding records",
                                     saved.buckets_size(), used));
  }
  if (saved.bucket_numbers_size() != (numbered ? used : 0)) {
    return Bad(name, absl::StrFormat("%d bucket numbers for %d slots holding "
                                     "records (a count window has none)",
                                     saved.bucket_numbers_size(), used));
  }
  if (numbered && saved.current() != 0) {
    return Bad(name, absl::StrFormat("current is %d; a time window has none",
                                     saved.current()));
  }
  std::vector<std::decay_t<decltype(window.empty())>> buckets(
      static_cast<size_t>(k), window.empty());
  int j = 0;
  for (int s = 0; s < k; ++s) {
    if (saved.fill(s) == 0) continue;
    auto bucket =
        LoadBucket(saved.buckets(j), window.empty(),
                   absl::StrFormat("%s.buckets[%d] (slot %d)", name, j, s));
    if (!bucket.ok()) return bucket.status();
    buckets[static_cast<size_t>(s)] = *std::move(bucket);
    ++j;
  }
  return buckets;
}

template <typename Window, typename Message>
absl::Status LoadCountRing(const Message& saved, absl::string_view name,
                           Window* window) {
  auto buckets = LoadBuckets(saved, name, *window, /*numbered=*/false);
  if (!buckets.ok()) return buckets.status();
  std::vector<int64_t> fill(saved.fill().begin(), saved.fill().end());
  if (absl::Status s = window->Restore(*std::move(buckets), std::move(fill),
                                       saved.current());
      !s.ok()) {
    return Bad(name, s.message());
  }
  return absl::OkStatus();
}

template <typename Window, typename Message>
void SaveTimeRing(const Window& window, Message* out) {
  SaveRing(window, out);
  for (int s = 0; s < window.buckets(); ++s) {
    if (window.fill(s) > 0) out->add_bucket_numbers(*window.bucket_number(s));
  }
}

template <typename Window, typename Message>
absl::Status LoadTimeRing(const Message& saved, absl::string_view name,
                          Window* window) {
  auto buckets = LoadBuckets(saved, name, *window, /*numbered=*/true);
  if (!buckets.ok()) return buckets.status();
  std::vector<int64_t> fill(saved.fill().begin(), saved.fill().end());
  std::vector<std::optional<int64_t>> numbers(fill.size());
  int j = 0;
  for (size_t s = 0; s < fill.size(); ++s) {
    if (fill[s] > 0) numbers[s] = saved.bucket_numbers(j++);
  }
  if (absl::Status s = window->Restore(*std::move(buckets), std::move(fill),
                                       std::move(numbers));
      !s.ok()) {
    return Bad(name, s.message());
  }
  return absl::OkStatus();
}

// ---- FNV-1a ----

class Fnv1a {
 public:
  void Bytes(absl::string_view s) {
    Int(static_cast<int64_t>(s.size()));
    for (unsigned char c : s) Byte(c);
  }
  void Int(int64_t v) {
    for (int i = 0; i < 8; ++i) Byte(static_cast<unsigned char>(v >> (8 * i)));
  }
  void Double(double d) {
    int64_t bits;
    std::memcpy(&bits, &d, sizeof bits);
    Int(bits);
  }
  void Doubles(absl::Span<const double> v) {
    Int(static_cast<int64_t>(v.size()));
    for (double d : v) Double(d);
  }
  uint64_t value() const { return h_; }

 private:
  void Byte(unsigned char c) {
    h_ ^= c;
    h_ *= 0x100000001b3ULL;
  }
  uint64_t h_ = 0xcbf29ce484222325ULL;
};

}  // namespace

std::string PackLabels(absl::Span<const int8_t> labels) {
  std::string out((labels.size() + 7) / 8, '\0');
  for (size_t i = 0; i < labels.size(); ++i) {
    if (labels[i] != 0)
      out[i / 8] = static_cast<char>(out[i / 8] | (1 << (i % 8)));
  }
  return out;
}

absl::StatusOr<std::vector<int8_t>> UnpackLabels(absl::string_view bytes,
                                                 size_t count,
                                                 absl::string_view field) {
  if (bytes.size() != (count + 7) / 8) {
    return Bad(field, absl::StrFormat("%d bytes for %d labels; need %d",
                                      bytes.size(), count, (count + 7) / 8));
  }
  if (count % 8 != 0 &&
      (static_cast<unsigned char>(bytes.back()) >> (count % 8)) != 0) {
    return Bad(field, "bits past the last label are set");
  }
  std::vector<int8_t> labels(count);
  for (size_t i = 0; i < count; ++i) {
    labels[i] = static_cast<int8_t>(
        (static_cast<unsigned char>(bytes[i / 8]) >> (i % 8)) & 1);
  }
  return labels;
}

void SaveWindow(const LabelledCountWindow& window, State::LabelledWindow* out) {
  SaveRing(window, out);
  out->set_current(window.current());
}
void SaveWindow(const LabelledTimeWindow& window, State::LabelledWindow* out) {
  SaveTimeRing(window, out);
}
void SaveWindow(const ScoredCountWindow& window, State::ScoredWindow* out) {
  SaveRing(window, out);
  out->set_current(window.current());
}
void SaveWindow(const ScoredTimeWindow& window, State::ScoredWindow* out) {
  SaveTimeRing(window, out);
}

absl::Status LoadWindow(const State::LabelledWindow& saved,
                        absl::string_view name, LabelledCountWindow* window) {
  return LoadCountRing(saved, name, window);
}
absl::Status LoadWindow(const State::LabelledWindow& saved,
                        absl::string_view name, LabelledTimeWindow* window) {
  return LoadTimeRing(saved, name, window);
}
absl::Status LoadWindow(const State::ScoredWindow& saved,
                        absl::string_view name, ScoredCountWindow* window) {
  return LoadCountRing(saved, name, window);
}
absl::Status LoadWindow(const State::ScoredWindow& saved,
                        absl::string_view name, ScoredTimeWindow* window) {
  return LoadTimeRing(saved, name, window);
}

void SaveCharts(const CusumCharts& charts, State::CusumCharts* out) {
  const CusumCharts::State state = charts.state();
  out->set_limits_set(state.limits_set);
  for (const CusumCharts::ChartState& c : state.charts) {
    State::CusumChart* chart = out->add_charts();
    chart->set_chart(c.name);
    chart->set_note(c.note);
    chart->set_last_alarm_value(c.last_alarm_value);
    if (!c.limit) continue;
    chart->set_ready(true);
    chart->set_limit(c.limit->limit);
    chart->set_target_arl(c.limit->target_arl);
    chart->set_arl(c.limit->arl.value);
    chart->set_arl_discretisation_error(c.limit->arl.discretisation_error);
    chart->set_value(c.cusum.value);
    chart->set_records(c.cusum.records);
    chart->set_alarms(c.cusum.alarms);
    chart->set_records_since_alarm(c.cusum.records_since_alarm);
  }
  std::vector<int8_t> labels;
  labels.reserve(state.buffered.size());
  for (const auto& [log_odds, label] : state.buffered) {
    out->add_buffered_log_odds(log_odds);
    labels.push_back(label);
  }
  out->set_buffered_labels(PackLabels(labels));
  out->set_skipped(state.skipped);
}

absl::Status LoadCharts(const State::CusumCharts& saved, CusumCharts* charts) {
  constexpr absl::string_view kWhere = "cusum";
  // At most three charts (upper, lower, slope); Restore checks the names.
  if (saved.charts_size() > 3) {
    return Bad(kWhere, absl::StrCat(saved.charts_size(), " charts; at most 3"));
  }
  if (saved.buffered_log_odds_size() > CusumCharts::kMaxBuffered) {
    return Bad(kWhere, absl::StrCat(saved.buffered_log_odds_size(),
                                    " buffered records; at most ",
                                    CusumCharts::kMaxBuffered));
  }
  absl::StatusOr<std::vector<int8_t>> labels =
      UnpackLabels(saved.buffered_labels(),
                   static_cast<size_t>(saved.buffered_log_odds_size()),
                   "cusum.buffered_labels");
  if (!labels.ok()) return labels.status();
  CusumCharts::State state;
  state.limits_set = saved.limits_set();
  for (const State::CusumChart& c : saved.charts()) {
    CusumCharts::ChartState cs;
    cs.name = c.chart();
    cs.note = c.note();
    cs.last_alarm_value = c.last_alarm_value();
    if (c.ready()) {
      monitor::ControlLimit limit;
      limit.limit = c.limit();
      limit.target_arl = c.target_arl();
      limit.arl.value = c.arl();
      limit.arl.discretisation_error = c.arl_discretisation_error();
      cs.limit = limit;
    }
    cs.cusum = {c.value(), c.records(), c.alarms(), c.records_since_alarm()};
    state.charts.push_back(std::move(cs));
  }
  state.buffered.reserve(labels->size());
  for (int i = 0; i < saved.buffered_log_odds_size(); ++i) {
    state.buffered.emplace_back(saved.buffered_log_odds(i),
                                (*labels)[static_cast<size_t>(i)]);
  }
  state.skipped = saved.skipped();
  if (absl::Status s = charts->Restore(std::move(state)); !s.ok()) {
    return Bad(kWhere, s.message());
  }
  return absl::OkStatus();
}

void SaveCoverage(const OutcomeCoverage& coverage,
                  google::protobuf::RepeatedPtrField<State::Cohort>* out) {
  for (const OutcomeCoverage::Cohort& c : coverage.cohorts()) {
    State::Cohort* cohort = out->Add();
    if (c.bucket == INT64_MIN) continue;
    cohort->set_used(true);
    cohort->set_bucket(c.bucket);
    cohort->set_scored(c.scored);
    cohort->set_labelled(c.labelled);
  }
}

absl::Status LoadCoverage(
    const google::protobuf::RepeatedPtrField<State::Cohort>& saved,
    OutcomeCoverage* coverage) {
  if (saved.size() != OutcomeCoverage::kSlots) {
    return Bad("coverage", absl::StrCat(saved.size(), " cohorts; the ring has ",
                                        OutcomeCoverage::kSlots));
  }
  std::array<OutcomeCoverage::Cohort, OutcomeCoverage::kSlots> ring;
  for (int s = 0; s < OutcomeCoverage::kSlots; ++s) {
    const State::Cohort& c = saved[s];
    if (!c.used()) {
      if (c.bucket() != 0 || c.scored() != 0 || c.labelled() != 0) {
        return Bad("coverage",
                   absl::StrCat("cohort ", s, " is unused but holds values"));
      }
      continue;
    }
    if (c.bucket() == INT64_MIN) {
      return Bad("coverage",
                 absl::StrCat("cohort ", s, ": bucket out of range"));
    }
    ring[static_cast<size_t>(s)] = {c.bucket(), c.scored(), c.labelled()};
  }
  if (absl::Status s = coverage->Restore(ring); !s.ok()) {
    return Bad("coverage", s.message());
  }
  return absl::OkStatus();
}

std::string LayoutHash(const StabilityLayout& layout) {
  Fnv1a h;
  h.Int(layout.score() ? 1 : 0);
  if (layout.score()) {
    h.Doubles(layout.score()->edges());
    h.Doubles(layout.score()->proportions());
  }
  h.Bytes(layout.score_note());
  h.Int(layout.score_baseline_count());
  h.Int(layout.score_nonzero_bins());
  h.Int(static_cast<int64_t>(layout.features().size()));
  for (const StabilityLayout::Feature& f : layout.features()) {
    h.Bytes(f.name);
    h.Int(static_cast<int64_t>(f.mode));
    h.Int(f.bins ? 1 : 0);
    if (f.bins) {
      h.Doubles(f.bins->edges());
      h.Doubles(f.bins->proportions());
    }
    h.Int(f.range ? 1 : 0);
    if (f.range) {
      h.Double(f.range->lower);
      h.Double(f.range->upper);
    }
    h.Int(f.levels ? 1 : 0);
    if (f.levels) {
      h.Int(static_cast<int64_t>(f.levels->levels().size()));
      for (const std::string& level : f.levels->levels()) h.Bytes(level);
      h.Doubles(f.levels->proportions());
    }
    h.Bytes(f.no_baseline);
    h.Int(static_cast<int64_t>(f.level_by_index.size()));
    for (absl::string_view level : f.level_by_index) h.Bytes(level);
    h.Int(f.baseline_count);
    h.Int(f.nonzero_bins);
  }
  return absl::StrFormat("%016x", h.value());
}

// ---- HealthWindows::Capture and Restore (declared in windows.h) ----

namespace {

// The `key=value` lines of a fingerprint, in order.
std::vector<std::pair<std::string, std::string>> FingerprintLines(
    absl::string_view fingerprint) {
  std::vector<std::pair<std::string, std::string>> lines;
  for (absl::string_view line : absl::StrSplit(fingerprint, '\n')) {
    const size_t eq = line.find('=');
    if (eq == absl::string_view::npos) {
      lines.emplace_back(std::string(line), "");
    } else {
      lines.emplace_back(std::string(line.substr(0, eq)),
                         std::string(line.substr(eq + 1)));
    }
  }
  return lines;
}

// "buckets: saved 10, these windows 20; ..." for the keys that differ.
std::string FingerprintDifference(absl::string_view saved,
                                  absl::string_view mine) {
  if (saved.empty()) return "the state has no fingerprint";
  const auto theirs = FingerprintLines(saved);
  const auto ours = FingerprintLines(mine);
  std::vector<std::string> diffs;
  for (const auto& [key, value] : ours) {
    std::optional<std::string> other;
    for (const auto& [k, v] : theirs) {
      if (k == key) other = v;
    }
    if (!other) {
      diffs.push_back(absl::StrCat(key, ": not in the state"));
    } else if (*other != value) {
      diffs.push_back(absl::StrCat(key, ": saved '", CallerText(*other),
                                   "', these windows '", CallerText(value),
                                   "'"));
    }
  }
  for (const auto& [k, v] : theirs) {
    bool known = false;
    for (const auto& [key, value] : ours) known = known || key == k;
    if (!known) diffs.push_back(absl::StrCat("'", CallerText(k), "': unknown"));
  }
  if (diffs.size() > 8) {
    const size_t more = diffs.size() - 8;
    diffs.resize(8);
    diffs.push_back(absl::StrCat("and ", more, " more"));
  }
  return absl::StrJoin(diffs, "; ");
}

absl::Status CheckCounter(absl::string_view field, int64_t n) {
  if (n < 0 || n > (int64_t{1} << 62)) {
    return absl::InvalidArgumentError(
        absl::StrCat(field, ": ", n, " is outside [0, 2^62]"));
  }
  return absl::OkStatus();
}

}  // namespace

v1::HealthWindowsState HealthWindows::Capture() const {
  v1::HealthWindowsState state;
  state.set_fingerprint(fingerprint_);
  {
    absl::MutexLock lock(&labelled_mu_);
    SaveWindow(labelled_count_, state.mutable_labelled_count());
    SaveWindow(labelled_time_, state.mutable_labelled_time());
    SaveCharts(charts_, state.mutable_cusum());
    v1::HealthWindowsState::Waiting* w = state.mutable_waiting();
    std::vector<int8_t> labels;
    labels.reserve(waiting_.size());
    w->mutable_scored_at_steps()->Reserve(static_cast<int>(waiting_.size()));
    w->mutable_log_odds()->Reserve(static_cast<int>(waiting_.size()));
    int64_t previous = 0;
    for (const auto& [scored_at, record] : waiting_) {
      const int64_t ns = absl::ToUnixNanos(scored_at);
      // Oldest first, so every step after the first is >= 0.
      w->add_scored_at_steps(static_cast<int64_t>(
          static_cast<uint64_t>(ns) - static_cast<uint64_t>(previous)));
      previous = ns;
      w->add_log_odds(record.log_odds);
      labels.push_back(static_cast<int8_t>(record.label));
    }
    w->set_labels(PackLabels(labels));
    w->set_refused(waiting_refused_);
    state.set_labelled_since_start(labelled_since_start_);
  }
  {
    absl::MutexLock lock(&scored_mu_);
    SaveWindow(scored_count_, state.mutable_scored_count());
    SaveWindow(scored_time_, state.mutable_scored_time());
  }
  {
    absl::MutexLock lock(&coverage_mu_);
    SaveCoverage(coverage_, state.mutable_coverage());
  }
  state.set_refused_labelled_count(
      refused_[kLabelledSide][0].load(std::memory_order_relaxed));
  state.set_refused_labelled_time(
      refused_[kLabelledSide][1].load(std::memory_order_relaxed));
  state.set_refused_scored_count(
      refused_[kScoredSide][0].load(std::memory_order_relaxed));
  state.set_refused_scored_time(
      refused_[kScoredSide][1].load(std::memory_order_relaxed));
  return state;
}

absl::Status HealthWindows::Restore(const v1::HealthWindowsState& state) {
  if (state.fingerprint() != fingerprint_) {
    return absl::FailedPreconditionError(absl::StrCat(
        "health windows of ", CallerText(plan_->name()), " version ",
        CallerText(plan_->version()),
        ": the saved state was captured from windows of another shape: ",
        FingerprintDifference(state.fingerprint(), fingerprint_)));
  }
  // Everything is loaded into copies of this instance's parts first; the
  // windows change only once every part has been accepted.
  std::optional<OutcomeCount> labelled_count;
  std::optional<OutcomeTime> labelled_time;
  std::optional<CusumCharts> charts;
  {
    absl::MutexLock lock(&labelled_mu_);
    labelled_count.emplace(labelled_count_);
    labelled_time.emplace(labelled_time_);
    charts.emplace(charts_);
  }
  std::optional<ScoredCount> scored_count;
  std::optional<ScoredTime> scored_time;
  {
    absl::MutexLock lock(&scored_mu_);
    scored_count.emplace(scored_count_);
    scored_time.emplace(scored_time_);
  }
  std::optional<OutcomeCoverage> coverage;
  {
    absl::MutexLock lock(&coverage_mu_);
    coverage.emplace(coverage_);
  }
  if (absl::Status s = LoadWindow(state.labelled_count(), "labelled_count",
                                  &*labelled_count);
      !s.ok()) {
    return s;
  }
  if (absl::Status s =
          LoadWindow(state.labelled_time(), "labelled_time", &*labelled_time);
      !s.ok()) {
    return s;
  }
  if (absl::Status s =
          LoadWindow(state.scored_count(), "scored_count", &*scored_count);
      !s.ok()) {
    return s;
  }
  if (absl::Status s =
          LoadWindow(state.scored_time(), "scored_time", &*scored_time);
      !s.ok()) {
    return s;
  }
  if (absl::Status s = LoadCharts(state.cusum(), &*charts); !s.ok()) return s;
  if (absl::Status s = LoadCoverage(state.coverage(), &*coverage); !s.ok()) {
    return s;
  }

  // The waiting records.
  const v1::HealthWindowsState::Waiting& w = state.waiting();
  const int n = w.scored_at_steps_size();
  if (n > options_.max_immature_records) {
    return absl::InvalidArgumentError(absl::StrCat(
        "waiting: ", n, " records; at most max_immature_records = ",
        options_.max_immature_records, " wait"));
  }
  if (w.log_odds_size() != n) {
    return absl::InvalidArgumentError(absl::StrCat(
        "waiting: ", n, " score times but ", w.log_odds_size(), " log-odds"));
  }
  absl::StatusOr<std::vector<int8_t>> labels =
      UnpackLabels(w.labels(), static_cast<size_t>(n), "waiting.labels");
  if (!labels.ok()) return labels.status();
  std::multimap<absl::Time, Waiting> waiting;
  int64_t ns = 0;
  for (int i = 0; i < n; ++i) {
    const int64_t step = w.scored_at_steps(i);
    if (i > 0 && (step < 0 || step > INT64_MAX - ns)) {
      return absl::InvalidArgumentError(
          absl::StrCat("waiting.scored_at_steps[", i, "] is ", step,
                       "; score times must not go back or past the year 2262"));
    }
    ns = i == 0 ? step : ns + step;
    if (!std::isfinite(w.log_odds(i))) {
      return absl::InvalidArgumentError(
          absl::StrCat("waiting.log_odds[", i, "] is ", w.log_odds(i),
                       "; waiting records have finite log-odds"));
    }
    waiting.emplace_hint(
        waiting.end(), absl::FromUnixNanos(ns),
        Waiting{w.log_odds(i), (*labels)[static_cast<size_t>(i)]});
  }
  for (const auto& [field, value] :
       {std::pair<absl::string_view, int64_t>{"waiting.refused", w.refused()},
        {"labelled_since_start", state.labelled_since_start()},
        {"refused_labelled_count", state.refused_labelled_count()},
        {"refused_labelled_time", state.refused_labelled_time()},
        {"refused_scored_count", state.refused_scored_count()},
        {"refused_scored_time", state.refused_scored_time()}}) {
    if (absl::Status s = CheckCounter(field, value); !s.ok()) return s;
  }

  // Everything is valid: swap it in.
  {
    absl::MutexLock lock(&labelled_mu_);
    labelled_count_ = *std::move(labelled_count);
    labelled_time_ = *std::move(labelled_time);
    charts_ = *std::move(charts);
    waiting_ = std::move(waiting);
    waiting_refused_ = w.refused();
    labelled_since_start_ = state.labelled_since_start();
  }
  {
    absl::MutexLock lock(&scored_mu_);
    scored_count_ = *std::move(scored_count);
    scored_time_ = *std::move(scored_time);
  }
  {
    absl::MutexLock lock(&coverage_mu_);
    coverage_ = *std::move(coverage);
  }
  refused_[kLabelledSide][0].store(state.refused_labelled_count(),
                                   std::memory_order_relaxed);
  refused_[kLabelledSide][1].store(state.refused_labelled_time(),
                                   std::memory_order_relaxed);
  refused_[kScoredSide][0].store(state.refused_scored_count(),
                                 std::memory_order_relaxed);
  refused_[kScoredSide][1].store(state.refused_scored_time(),
                                 std::memory_order_relaxed);
  return absl::OkStatus();
}

}  // namespace plumbline::daemon

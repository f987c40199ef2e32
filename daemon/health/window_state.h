// File: daemon/health/window_state.h
//
// The mapping between the parts of a set version's health windows and the
// messages of plumbline.v1.HealthWindowsState (proto/plumbline/v1/
// health_state.proto): HealthWindows::Capture and Restore (windows.h) save
// and load each window, the CUSUM charts and the coverage through these
// functions. The monitor's accumulators and windows expose plain state
// (state() / Restore(), monitor/ has no protobuf); this file is where it
// becomes protobuf and back.
//
//   v1::HealthWindowsState::LabelledWindow saved;
//   SaveWindow(labelled_count, &saved);
//   LabelledCountWindow fresh = ...;            // same options
//   absl::Status s = LoadWindow(saved, "labelled_count", &fresh);
//
// Every Load checks sizes against the window it loads into before copying
// anything (a hostile state cannot make it allocate more than the window
// could hold) and returns INVALID_ARGUMENT naming the field path
// ("labelled_time.buckets[3]: ...") with the target unchanged.
//
// Pure functions over values; thread-safe as far as their arguments are
// (HealthWindows holds the window's mutex around them).
#ifndef PLUMBLINE_DAEMON_HEALTH_WINDOW_STATE_H_
#define PLUMBLINE_DAEMON_HEALTH_WINDOW_STATE_H_

#include <cstdint>
#include <string>
#include <vector>

#include "absl/status/status.h"
#include "absl/status/statusor.h"
#include "absl/strings/string_view.h"
#include "absl/types/span.h"
#include "daemon/health/coverage.h"
#include "daemon/health/cusum_charts.h"
#include "daemon/health/labelled.h"
#include "daemon/health/stability.h"
#include "monitor/window.h"
#include "plumbline/v1/health_state.pb.h"

namespace plumbline::daemon {

using LabelledCountWindow = monitor::CountWindow<LabelledAccumulator>;
using LabelledTimeWindow = monitor::TimeWindow<LabelledAccumulator>;
using ScoredCountWindow = monitor::CountWindow<ScoredAccumulator>;
using ScoredTimeWindow = monitor::TimeWindow<ScoredAccumulator>;

// 0/1 labels, 8 to a byte (record i in bit i % 8 of byte i / 8).
std::string PackLabels(absl::Span<const int8_t> labels);
// The `count` labels of `bytes`. INVALID_ARGUMENT naming `field` unless
// bytes holds exactly (count + 7) / 8 bytes and its unused bits are 0.
absl::StatusOr<std::vector<int8_t>> UnpackLabels(absl::string_view bytes,
                                                 size_t count,
                                                 absl::string_view field);

void SaveWindow(const LabelledCountWindow& window,
                v1::HealthWindowsState::LabelledWindow* out);
void SaveWindow(const LabelledTimeWindow& window,
                v1::HealthWindowsState::LabelledWindow* out);
void SaveWindow(const ScoredCountWindow& window,
                v1::HealthWindowsState::ScoredWindow* out);
void SaveWindow(const ScoredTimeWindow& window,
                v1::HealthWindowsState::ScoredWindow* out);

// Loads `saved` into `window`, a window created with the same options
// (its bucket count, bucket capacity and layout bound what is accepted).
// `name` starts every message. INVALID_ARGUMENT, window unchanged, for a
// malformed state.
absl::Status LoadWindow(const v1::HealthWindowsState::LabelledWindow& saved,
                        absl::string_view name, LabelledCountWindow* window);
absl::Status LoadWindow(const v1::HealthWindowsState::LabelledWindow& saved,
                        absl::string_view name, LabelledTimeWindow* window);
absl::Status LoadWindow(const v1::HealthWindowsState::ScoredWindow& saved,
                        absl::string_view name, ScoredCountWindow* window);
absl::Status LoadWindow(const v1::HealthWindowsState::ScoredWindow& saved,
                        absl::string_view name, ScoredTimeWindow* window);

void SaveCharts(const CusumCharts& charts,
                v1::HealthWindowsState::CusumCharts* out);
// INVALID_ARGUMENT naming the field, charts unchanged.
absl::Status LoadCharts(const v1::HealthWindowsState::CusumCharts& saved,
                        CusumCharts* charts);

void SaveCoverage(
    const OutcomeCoverage& coverage,
    google::protobuf::RepeatedPtrField<v1::HealthWindowsState::Cohort>* out);
// INVALID_ARGUMENT naming the slot, coverage unchanged.
absl::Status LoadCoverage(const google::protobuf::RepeatedPtrField<
                              v1::HealthWindowsState::Cohort>& saved,
                          OutcomeCoverage* coverage);

// A 64-bit FNV-1a hash, as 16 hex digits, of everything in `layout` that
// shapes a scored bucket: each feature's name, mode, baseline edges,
// proportions, range, levels and counts, and the score baseline. Stable
// across builds and machines (no std::hash or absl::Hash, whose values may
// change between runs).
std::string LayoutHash(const StabilityLayout& layout);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_HEALTH_WINDOW_STATE_H_

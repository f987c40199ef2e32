// File: daemon/util/record_ids.h
//
// Record ids made up for callers that send none (plumbd) and for plumbctl's
// records: "<prefix>-<unix microseconds>-<tag>-<n>", where the tag is 8 hex
// digits drawn at random when the generator is made (one per process) and n
// counts up from 1. Two processes, or two runs of one, make the same id only
// if they draw the same tag (1 in 2^32) and stamp the same microsecond; the
// ledger refuses such a repeat rather than mixing two records
// (daemon/ledger/ledger.h: a record id names one record of a set).
//
//   RecordIdGenerator ids;
//   ids.Next("courier", absl::Now());   //
//   "courier-1764577800123456-9f3a01c2-1"
//
// Thread-safe: Next may be called from any number of threads.
#ifndef PLUMBLINE_DAEMON_UTIL_RECORD_IDS_H_
#define PLUMBLINE_DAEMON_UTIL_RECORD_IDS_H_

#include <atomic>
#include <cstdint>
#include <string>

#include "absl/strings/string_view.h"
#include "absl/time/time.h"

namespace plumbline::daemon {

class RecordIdGenerator {
 public:
  // Draws the tag from the system's random source.
  RecordIdGenerator();
  // A fixed tag (tests).
  explicit RecordIdGenerator(uint32_t tag) : tag_(tag) {}

  std::string Next(absl::string_view prefix, absl::Time now);

 private:
  const uint32_t tag_;
  std::atomic<uint64_t> counter_{0};
};

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_UTIL_RECORD_IDS_H_

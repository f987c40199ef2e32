// File: daemon/util/record_ids.cc
#include "daemon/util/record_ids.h"

#include <random>

#include "absl/strings/str_cat.h"
#include "absl/strings/str_format.h"

namespace plumbline::daemon {

// std::random_device reads the kernel's random source on Linux (getrandom);
// the tag only has to differ between processes, not be secret.
RecordIdGenerator::RecordIdGenerator()
    : tag_(static_cast<uint32_t>(std::random_device()())) {}

std::string RecordIdGenerator::Next(absl::string_view prefix, absl::Time now) {
  const uint64_t n = counter_.fetch_add(1, std::memory_order_relaxed) + 1;
  return absl::StrCat(prefix, "-", absl::ToUnixMicros(now), "-",
                      absl::StrFormat("%08x", tag_), "-", n);
}

}  // namespace plumbline::daemon

// File: tests/testing/http.h
//
// Test-only: fetch a URL with libcurl (a plain GET, no compression) and
// read samples out of a Prometheus text exposition.
//
//   absl::StatusOr<std::string> body = HttpGet("127.0.0.1:7391", "/metrics");
//   std::optional<double> v = FindSample(*body, "plumbline_drift_state",
//                                        {{"set", "courier"}});
#ifndef PLUMBLINE_TESTS_TESTING_HTTP_H_
#define PLUMBLINE_TESTS_TESTING_HTTP_H_

#include <map>
#include <optional>
#include <string>
#include <vector>

#include "absl/status/statusor.h"
#include "absl/strings/string_view.h"

namespace plumbline::daemon::testing {

// The body of http://host_port/path; an error unless the status is 200.
absl::StatusOr<std::string> HttpGet(const std::string& host_port,
                                    const std::string& path);

// The status and body of http://host_port/path whatever the status; an
// error only when no answer came.
struct HttpAnswer {
  long status = 0;
  std::string body;
};
absl::StatusOr<HttpAnswer> HttpFetch(const std::string& host_port,
                                     const std::string& path);

struct Sample {
  std::string name;
  std::map<std::string, std::string> labels;
  double value = 0;
};

// Every sample line of a text exposition (comments skipped). Label values
// are taken as written (the tests use no escapes).
std::vector<Sample> ParseExposition(absl::string_view text);

// The value of the one sample named `name` whose labels include `labels`;
// nullopt if there is none (or more than one).
std::optional<double> FindSample(
    const std::vector<Sample>& samples, absl::string_view name,
    const std::map<std::string, std::string>& labels);

}  // namespace plumbline::daemon::testing

#endif  // PLUMBLINE_TESTS_TESTING_HTTP_H_

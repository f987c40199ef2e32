// File: tests/testing/http.cc
#include "tests/testing/http.h"

#include <curl/curl.h>

#include <utility>

#include "absl/strings/numbers.h"
#include "absl/strings/str_cat.h"
#include "absl/strings/str_split.h"
#include "absl/strings/strip.h"

namespace plumbline::daemon::testing {
namespace {

size_t Append(char* data, size_t size, size_t count, void* out) {
  static_cast<std::string*>(out)->append(data, size * count);
  return size * count;
}

}  // namespace

absl::StatusOr<HttpAnswer> HttpFetch(const std::string& host_port,
                                     const std::string& path) {
  CURL* curl = curl_easy_init();
  if (curl == nullptr) return absl::InternalError("curl_easy_init failed");
  const std::string url = absl::StrCat("http://", host_port, path);
  HttpAnswer answer;
  curl_easy_setopt(curl, CURLOPT_URL, url.c_str());
  curl_easy_setopt(curl, CURLOPT_WRITEFUNCTION, &Append);
  curl_easy_setopt(curl, CURLOPT_WRITEDATA, &answer.body);
  curl_easy_setopt(curl, CURLOPT_TIMEOUT,
                   30L);  // safety net, not a speed check
  const CURLcode rc = curl_easy_perform(curl);
  curl_easy_getinfo(curl, CURLINFO_RESPONSE_CODE, &answer.status);
  curl_easy_cleanup(curl);
  if (rc != CURLE_OK) {
    return absl::UnavailableError(
        absl::StrCat("GET ", url, ": ", curl_easy_strerror(rc)));
  }
  return answer;
}

absl::StatusOr<std::string> HttpGet(const std::string& host_port,
                                    const std::string& path) {
  absl::StatusOr<HttpAnswer> answer = HttpFetch(host_port, path);
  if (!answer.ok()) return answer.status();
  if (answer->status != 200) {
    return absl::UnavailableError(absl::StrCat("GET http://", host_port, path,
                                               ": HTTP ", answer->status));
  }
  return std::move(answer->body);
}

std::vector<Sample> ParseExposition(absl::string_view text) {
  std::vector<Sample> out;
  for (absl::string_view line : absl::StrSplit(text, '\n')) {
    if (line.empty() || line[0] == '#') continue;
    Sample s;
    const size_t brace = line.find('{');
    const size_t space = line.rfind(' ');
    if (space == absl::string_view::npos) continue;
    if (brace != absl::string_view::npos && brace < space) {
      s.name = std::string(line.substr(0, brace));
      const size_t close = line.rfind('}');
      absl::string_view labels = line.substr(brace + 1, close - brace - 1);
      for (absl::string_view pair :
           absl::StrSplit(labels, "\",", absl::SkipEmpty())) {
        const size_t eq = pair.find("=\"");
        if (eq == absl::string_view::npos) continue;
        absl::string_view value = pair.substr(eq + 2);
        absl::ConsumeSuffix(&value, "\"");
        s.labels[std::string(pair.substr(0, eq))] = std::string(value);
      }
    } else {
      s.name = std::string(line.substr(0, space));
    }
    absl::string_view value = line.substr(space + 1);
    if (value == "+Inf") {
      s.value = std::numeric_limits<double>::infinity();
    } else if (!absl::SimpleAtod(value, &s.value)) {
      continue;
    }
    out.push_back(std::move(s));
  }
  return out;
}

std::optional<double> FindSample(
    const std::vector<Sample>& samples, absl::string_view name,
    const std::map<std::string, std::string>& labels) {
  std::optional<double> found;
  for (const Sample& s : samples) {
    if (s.name != name) continue;
    bool match = true;
    for (const auto& [k, v] : labels) {
      auto it = s.labels.find(k);
      if (it == s.labels.end() || it->second != v) match = false;
    }
    if (!match) continue;
    if (found) return std::nullopt;
    found = s.value;
  }
  return found;
}

}  // namespace plumbline::daemon::testing

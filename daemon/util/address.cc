// File: daemon/util/address.cc
#include "daemon/util/address.h"

#include "absl/strings/match.h"
#include "absl/strings/str_cat.h"

namespace plumbline::daemon {

std::string BoundAddress(const std::string& listen, int port) {
  // A Unix socket has no port (gRPC reports 1 for it): its address is the
  // socket's path, as the caller gave it.
  if (absl::StartsWith(listen, "unix:") ||
      absl::StartsWith(listen, "unix-abstract:")) {
    return listen;
  }
  const size_t colon = listen.rfind(':');
  const std::string host =
      colon == std::string::npos ? listen : listen.substr(0, colon);
  return absl::StrCat(host, ":", port);
}

}  // namespace plumbline::daemon

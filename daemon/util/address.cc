// File: daemon/util/address.cc
#include "daemon/util/address.h"

#include "absl/strings/str_cat.h"

namespace plumbline::daemon {

std::string BoundAddress(const std::string& listen, int port) {
  const size_t colon = listen.rfind(':');
  const std::string host =
      colon == std::string::npos ? listen : listen.substr(0, colon);
  return absl::StrCat(host, ":", port);
}

}  // namespace plumbline::daemon

// File: daemon/util/grpc_status.cc
#include "daemon/util/grpc_status.h"

#include <string>
#include <utility>

#include "absl/strings/str_cat.h"
#include "absl/strings/string_view.h"

namespace plumbline::daemon {

// absl::StatusCode and grpc::StatusCode share the canonical numbering
// (OK = 0 ... UNAUTHENTICATED = 16); checked here so a change would not
// compile.
static_assert(static_cast<int>(absl::StatusCode::kInvalidArgument) ==
              static_cast<int>(grpc::StatusCode::INVALID_ARGUMENT));
static_assert(static_cast<int>(absl::StatusCode::kNotFound) ==
              static_cast<int>(grpc::StatusCode::NOT_FOUND));
static_assert(static_cast<int>(absl::StatusCode::kUnauthenticated) ==
              static_cast<int>(grpc::StatusCode::UNAUTHENTICATED));

grpc::Status ToGrpcStatus(const absl::Status& status) {
  if (status.ok()) return grpc::Status::OK;
  absl::string_view message = status.message();
  std::string text;
  if (message.size() <= kMaxStatusMessageBytes) {
    text = std::string(message);
  } else {
    // Cut on a UTF-8 character boundary: back over continuation bytes.
    size_t cut = kMaxStatusMessageBytes;
    while (cut > 0 &&
           (static_cast<unsigned char>(message[cut]) & 0xc0) == 0x80) {
      --cut;
    }
    text = absl::StrCat(message.substr(0, cut), "... (message cut at ", cut,
                        " of ", message.size(), " bytes)");
  }
  return grpc::Status(static_cast<grpc::StatusCode>(status.code()),
                      std::move(text));
}

absl::Status FromGrpcStatus(const grpc::Status& status) {
  if (status.ok()) return absl::OkStatus();
  return absl::Status(static_cast<absl::StatusCode>(status.error_code()),
                      status.error_message());
}

}  // namespace plumbline::daemon

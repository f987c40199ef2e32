// File: daemon/cli/output.cc
#include "daemon/cli/output.h"

#include "absl/strings/str_cat.h"
#include "absl/strings/str_format.h"
#include "google/protobuf/util/json_util.h"

namespace plumbline::daemon {

absl::StatusOr<OutputFormat> ParseOutputFormat(absl::string_view text) {
  if (text == "text") return OutputFormat::kText;
  if (text == "json") return OutputFormat::kJson;
  return absl::InvalidArgumentError(
      absl::StrCat("--format: '", text, "'; expected text or json"));
}

std::string FormatNumber(double x) { return absl::StrFormat("%.6g", x); }

std::string CountOf(int64_t n, absl::string_view singular,
                    absl::string_view plural) {
  if (n == 1) return absl::StrCat(n, " ", singular);
  if (plural.empty()) return absl::StrCat(n, " ", singular, "s");
  return absl::StrCat(n, " ", plural);
}

absl::StatusOr<std::string> MessageJson(
    const google::protobuf::Message& reply) {
  google::protobuf::util::JsonPrintOptions options;
  options.add_whitespace = true;
  options.always_print_primitive_fields = true;
  options.preserve_proto_field_names = true;
  std::string json;
  if (const auto s =
          google::protobuf::util::MessageToJsonString(reply, &json, options);
      !s.ok()) {
    return absl::InternalError(
        absl::StrCat("cannot write ", reply.GetTypeName(),
                     " as JSON: ", s.message().as_string()));
  }
  if (json.empty() || json.back() != '\n') json.push_back('\n');
  return json;
}

absl::Status PrintReply(const google::protobuf::Message& reply,
                        OutputFormat format,
                        absl::FunctionRef<std::string()> text,
                        std::ostream& out) {
  if (format == OutputFormat::kText) {
    out << text();
    return absl::OkStatus();
  }
  absl::StatusOr<std::string> json = MessageJson(reply);
  if (!json.ok()) return json.status();
  out << *json;
  return absl::OkStatus();
}

}  // namespace plumbline::daemon

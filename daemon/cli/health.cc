// File: daemon/cli/health.cc
#include "daemon/cli/health.h"

#include "daemon/cli/client.h"
#include "daemon/cli/health_table.h"

namespace plumbline::daemon {

absl::Status RunHealthCommand(const ClientOptions& client,
                              const std::string& set, OutputFormat format,
                              std::ostream& out) {
  MonitorClient monitor(client.addr, client.timeout);
  absl::StatusOr<v1::SetHealth> health = monitor.GetSetHealth(set);
  if (!health.ok()) return health.status();
  return PrintReply(
      *health, format, [&] { return FormatSetHealth(*health); }, out);
}

}  // namespace plumbline::daemon

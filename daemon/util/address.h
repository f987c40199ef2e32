// File: daemon/util/address.h
//
// Listen addresses as plumbd's servers report them once bound: the host the
// caller asked for with the port the kernel chose (for "HOST:0").
//
//   BoundAddress("127.0.0.1:0", 41234)   // "127.0.0.1:41234"
//   BoundAddress("unix:/run/plumbd.sock", 1)   // "unix:/run/plumbd.sock"
//
// Thread-safe: pure functions.
#ifndef PLUMBLINE_DAEMON_UTIL_ADDRESS_H_
#define PLUMBLINE_DAEMON_UTIL_ADDRESS_H_

#include <string>

namespace plumbline::daemon {

// HOST:PORT from the HOST part of `listen` and `port`; a "unix:PATH" or
// "unix-abstract:NAME" address unchanged (the target a client dials).
std::string BoundAddress(const std::string& listen, int port);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_UTIL_ADDRESS_H_

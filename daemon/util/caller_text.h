// File: daemon/util/caller_text.h
//
// Caller input quoted in an error message or a log line. A caller may send
// a feature name, set name, record id or version of any length and with any
// bytes; echoed raw, a 9,000-character name pushes the status message past
// gRPC's metadata limit (the client then sees RESOURCE_EXHAUSTED instead of
// the real error) and a newline or an escape sequence breaks the log. Every
// message that quotes a caller's string goes through CallerText:
//
//   absl::StrCat("feature '", CallerText(name), "' is not a feature ...")
//   // "feature 'aaaa...(9000 bytes)' is not a feature ..."   (cut)
//   // "version 'v1\x0a' ..."                                 (escaped)
//
// The text keeps at most kCallerTextBytes bytes (cut on a UTF-8 character
// boundary) and says how long the original was; ASCII control characters,
// DEL and bytes that are not valid UTF-8 are written as \xNN; valid UTF-8
// letters stay as they are. ToGrpcStatus (grpc_status.h) also caps a whole
// status message at kMaxStatusMessageBytes as a last guard.
//
// Thread-safe: pure functions.
#ifndef PLUMBLINE_DAEMON_UTIL_CALLER_TEXT_H_
#define PLUMBLINE_DAEMON_UTIL_CALLER_TEXT_H_

#include <cstddef>
#include <optional>
#include <string>

#include "absl/strings/string_view.h"

namespace plumbline::daemon {

// Bytes of a caller's string an error message repeats.
inline constexpr size_t kCallerTextBytes = 64;

// `text` made safe to quote: cut to `max_bytes` of input (then followed by
// "...(N bytes)", N the original length), control characters and invalid
// UTF-8 escaped as \xNN.
std::string CallerText(absl::string_view text,
                       size_t max_bytes = kCallerTextBytes);

// Length of the well-formed UTF-8 character at text[i] (1 for ASCII; RFC
// 3629: no overlong forms, surrogates or code points past U+10FFFF), 0 when
// the bytes there are not one. Written by hand: Abseil has no public UTF-8
// validator and protobuf's is internal. REQUIRES: i < text.size().
size_t Utf8CharLength(absl::string_view text, size_t i);

// The offset of the first ASCII control character (0x00-0x1f, 0x7f) or
// byte that is not part of valid UTF-8 in `text`; nullopt when there is
// none. Used to refuse such names and versions where they enter.
std::optional<size_t> FirstUnprintable(absl::string_view text);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_UTIL_CALLER_TEXT_H_

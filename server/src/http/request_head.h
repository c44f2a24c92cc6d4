// The head of an HTTP/1.1 request (request line and header fields) checked against the
// daemon's limits before any worker thread or handler sees it. Pure: it reads bytes and
// answers, so the connection gate can refuse a hostile head while it is still arriving,
// and the fuzzer can drive it without a socket.
#pragma once

#include <cstddef>
#include <string>
#include <string_view>

namespace factorwatch::server {

struct HeadLimits {
  // RFC 9112 section 3 recommends at least 8000 octets for the request line; curl and
  // browsers stay far below. Our longest legitimate target (an exposures query naming
  // assets) is a few hundred bytes.
  std::size_t request_line_bytes = 8192;
  // One header field line; cookies are not used here, so 8 KiB is generous.
  std::size_t field_line_bytes = 8192;
  // Whole head. Clients send 5-15 fields; 100 fields of 8 KiB would be 800 KiB per
  // connection, so the total is capped separately.
  std::size_t head_bytes = 32768;
  std::size_t field_count = 100;
  // Byte ranges in one Range field: one (resuming a download) is useful; many small
  // overlapping ranges multiply the response (RFC 9110 section 14.2 allows refusing).
  std::size_t ranges = 1;
};

struct HeadCheck {
  enum class State { incomplete, complete, refused };
  State state = State::incomplete;
  std::size_t length = 0;  // bytes of the head, blank line included (complete only)
  int status = 0;          // refused: 400, 414 or 431; 416 for too many ranges
  std::string detail;      // refused: plain words naming what was wrong
  std::string field;       // refused: the header field at fault, "" for the request line
};

// Looks at the bytes received so far for one request. `complete` once the blank line
// ending the head is there and every limit holds; `refused` as soon as a limit is broken
// or the bytes cannot be a request head (a NUL or other control byte, a line that is
// not `name: value`); `incomplete` otherwise. Leading empty lines before the request
// line are skipped as RFC 9112 section 2.2 allows (at most a few).
HeadCheck check_request_head(std::string_view received, const HeadLimits& limits);

}  // namespace factorwatch::server

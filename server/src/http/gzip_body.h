// gzip (RFC 1952) of a response body, for clients that send Accept-Encoding: gzip.
// A 5,000-asset exposures body shrinks to about 40% of its size; the daemon compresses
// a window's body once and serves the compressed copy from its cache after that.
#pragma once

#include <string>
#include <string_view>

namespace factorwatch::server {

// Throws std::runtime_error when zlib fails (out of memory).
std::string gzip_compress(std::string_view body);

// True when an Accept-Encoding header value accepts gzip (RFC 9110 section 12.5.3;
// "gzip;q=0" refuses it).
bool accepts_gzip(const std::string& accept_encoding);

}  // namespace factorwatch::server

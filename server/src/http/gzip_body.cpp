#include "gzip_body.h"

#include <zlib.h>

#include <cctype>
#include <cstdlib>
#include <stdexcept>

namespace factorwatch::server {

std::string gzip_compress(std::string_view body) {
  z_stream z{};
  // windowBits 15 + 16: a gzip header and trailer instead of zlib's; level 6, zlib's
  // default balance (the result is cached, so the time is spent once per window).
  if (deflateInit2(&z, 6, Z_DEFLATED, 15 + 16, 8, Z_DEFAULT_STRATEGY) != Z_OK)
    throw std::runtime_error("gzip: cannot start the compressor");
  std::string out(deflateBound(&z, static_cast<uLong>(body.size())), '\0');
  z.next_in = reinterpret_cast<Bytef*>(const_cast<char*>(body.data()));
  z.avail_in = static_cast<uInt>(body.size());
  z.next_out = reinterpret_cast<Bytef*>(out.data());
  z.avail_out = static_cast<uInt>(out.size());
  const int result = deflate(&z, Z_FINISH);
  const std::size_t size = z.total_out;
  deflateEnd(&z);
  if (result != Z_STREAM_END) throw std::runtime_error("gzip: compression did not finish");
  out.resize(size);
  return out;
}

bool accepts_gzip(const std::string& accept_encoding) {
  std::string lower;
  for (char c : accept_encoding) lower += static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  std::size_t start = 0;
  while (start < lower.size()) {
    std::size_t end = lower.find(',', start);
    if (end == std::string::npos) end = lower.size();
    std::string item = lower.substr(start, end - start);
    item.erase(0, item.find_first_not_of(' '));
    const std::size_t semicolon = item.find(';');
    std::string coding = item.substr(0, semicolon);
    coding.erase(coding.find_last_not_of(' ') + 1);
    if (coding == "gzip" || coding == "x-gzip" || coding == "*") {
      if (semicolon == std::string::npos) return true;
      const std::size_t q = item.find("q=", semicolon);
      return q == std::string::npos || std::strtod(item.c_str() + q + 2, nullptr) > 0;
    }
    start = end + 1;
  }
  return false;
}

}  // namespace factorwatch::server

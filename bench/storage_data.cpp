// Writes returns files for the storage benchmark (bench/storage_bench.py): rows of the
// planted factor panel (planted_panel.h) as a long CSV `date,asset,return`, date-major
// (one date's assets together, in name order), as a nightly feed arrives.
//
//   storage_data --assets N --dates T [--first F] [--decimals D] --out FILE
//
// Writes dates F .. F + T - 1 (business days from 2000-01-03, see business_dates) of the
// panel whose rows 0 .. F + T - 1 are drawn, so the rows of a later file (--first 2520
// --dates 1: the next night) continue the same panel. Returns are written in fixed
// notation with D decimals (default 6: "0.012346", about 28.5 bytes a row). Prints one
// JSON line: rows, bytes, seconds.
#include <charconv>
#include <chrono>
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <stdexcept>
#include <string>
#include <vector>

#include "planted_panel.h"

namespace {

using factorwatch::bench::Index;

// Fixed notation with `decimals` digits after the point, rounded half away from zero
// (exact for |x| * 10^decimals below 2^53, ample for daily returns).
char* put_fixed(char* out, double x, int decimals, std::int64_t scale) {
  const double scaled = std::round(std::fabs(x) * double(scale));
  const auto units = static_cast<std::uint64_t>(scaled);
  if (x < 0 && units != 0) *out++ = '-';
  out = std::to_chars(out, out + 24, units / std::uint64_t(scale)).ptr;
  *out++ = '.';
  std::uint64_t frac = units % std::uint64_t(scale);
  for (int d = decimals - 1; d >= 0; --d) {
    out[d] = char('0' + frac % 10);
    frac /= 10;
  }
  return out + decimals;
}

[[noreturn]] void usage() {
  std::fprintf(stderr, "usage: storage_data --assets N --dates T [--first F] [--decimals D] --out FILE\n");
  std::exit(2);
}

}  // namespace

int main(int argc, char** argv) {
  Index assets = 0, dates = 0, first = 0;
  int decimals = 6;
  std::string out_path;
  for (int i = 1; i < argc; ++i) {
    const std::string arg = argv[i];
    if (i + 1 >= argc) usage();
    const char* value = argv[++i];
    if (arg == "--assets") assets = std::atoll(value);
    else if (arg == "--dates") dates = std::atoll(value);
    else if (arg == "--first") first = std::atoll(value);
    else if (arg == "--decimals") decimals = std::atoi(value);
    else if (arg == "--out") out_path = value;
    else usage();
  }
  if (assets <= 0 || dates <= 0 || first < 0 || decimals < 1 || decimals > 12 || out_path.empty()) usage();

  const auto start = std::chrono::steady_clock::now();
  std::int64_t scale = 1;
  for (int d = 0; d < decimals; ++d) scale *= 10;
  const factorwatch::bench::RowMatrix values = factorwatch::bench::planted_rows(first + dates, assets, first, dates);
  const std::vector<std::string> names = factorwatch::bench::asset_names(assets);
  std::vector<std::string> days;
  for (factorwatch::engine::Date d : factorwatch::bench::business_dates(first, dates)) days.push_back(d.iso());

  std::FILE* f = std::fopen(out_path.c_str(), "wb");
  if (!f) {
    std::fprintf(stderr, "storage_data: cannot open %s for writing\n", out_path.c_str());
    return 1;
  }
  std::vector<char> buffer(std::size_t(1) << 20);
  std::size_t used = 0;
  std::uint64_t bytes = 0;
  bool ok = true;
  auto flush = [&] {
    ok = ok && std::fwrite(buffer.data(), 1, used, f) == used;
    bytes += used;
    used = 0;
  };
  const char header[] = "date,asset,return\n";
  std::memcpy(buffer.data(), header, sizeof header - 1);
  used = sizeof header - 1;
  for (Index t = 0; t < dates; ++t) {
    const std::string& day = days[std::size_t(t)];
    for (Index i = 0; i < assets; ++i) {
      if (buffer.size() - used < 128) flush();
      char* p = buffer.data() + used;
      std::memcpy(p, day.data(), day.size());
      p += day.size();
      *p++ = ',';
      const std::string& name = names[std::size_t(i)];
      std::memcpy(p, name.data(), name.size());
      p += name.size();
      *p++ = ',';
      p = put_fixed(p, values(t, i), decimals, scale);
      *p++ = '\n';
      used = std::size_t(p - buffer.data());
    }
  }
  flush();
  ok = (std::fclose(f) == 0) && ok;
  if (!ok) {
    std::fprintf(stderr, "storage_data: short write to %s\n", out_path.c_str());
    return 1;
  }
  const double seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  std::printf("{\"bench\": \"storage_data\", \"path\": \"%s\", \"assets\": %lld, \"dates\": %lld, \"first\": %lld, "
              "\"first_date\": \"%s\", \"last_date\": \"%s\", \"rows\": %lld, \"bytes\": %llu, \"seconds\": %.3f}\n",
              out_path.c_str(), static_cast<long long>(assets), static_cast<long long>(dates),
              static_cast<long long>(first), days.front().c_str(), days.back().c_str(),
              static_cast<long long>(assets * dates), static_cast<unsigned long long>(bytes), seconds);
  return 0;
}

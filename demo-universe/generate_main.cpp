// factorwatch-demo-universe: writes the fictional demo universe as CSV files.
//
//   factorwatch-demo-universe --out DIR [--seed S] [--assets N] [--years Y]
//
// Four flags are parsed by hand: the tool is tiny and its library stays Eigen-only.
#include <cerrno>
#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <exception>
#include <string>

#include "demo_files.h"
#include "generator.h"

namespace {

constexpr const char* kUsage =
    "usage: factorwatch-demo-universe --out DIR [--seed S] [--assets N] [--years Y]\n"
    "Writes a fictional returns universe with a planted factor model (invented data, not\n"
    "market data) into DIR. Defaults: seed 7, 640 assets, 6 years of business days.\n";

int usage_error(const std::string& message) {
  std::fprintf(stderr, "factorwatch-demo-universe: %s\n%s", message.c_str(), kUsage);
  return 2;
}

// Whole-string unsigned decimal; false on anything else (sign, spaces, overflow).
bool parse_unsigned(const std::string& text, unsigned long long* value) {
  if (text.empty() || text.find_first_not_of("0123456789") != std::string::npos) return false;
  errno = 0;
  char* end = nullptr;
  *value = std::strtoull(text.c_str(), &end, 10);
  return errno == 0 && *end == '\0';
}

}  // namespace

int main(int argc, char** argv) {
  namespace demo = factorwatch::demo;
  demo::DemoOptions options;
  std::string out_dir;
  for (int a = 1; a < argc; ++a) {
    const std::string flag = argv[a];
    if (flag == "--help" || flag == "-h") {
      std::fputs(kUsage, stdout);
      return 0;
    }
    if (flag != "--out" && flag != "--seed" && flag != "--assets" && flag != "--years") {
      return usage_error("unknown argument '" + flag + "'");
    }
    if (a + 1 >= argc) return usage_error(flag + " needs a value");
    const std::string value = argv[++a];
    if (flag == "--out") {
      out_dir = value;
      continue;
    }
    unsigned long long number = 0;
    if (!parse_unsigned(value, &number)) return usage_error(flag + " needs a non-negative integer, got '" + value + "'");
    if (flag == "--seed") {
      options.seed = number;
    } else if (number > 1000000) {
      return usage_error(flag + " " + value + " is too large");
    } else if (flag == "--assets") {
      options.assets = static_cast<int>(number);
    } else {
      options.years = static_cast<int>(number);
    }
  }
  if (out_dir.empty()) return usage_error("--out DIR is required");
  std::string error;
  if (!options.IsValid(&error)) return usage_error(error);

  try {
    const auto start = std::chrono::steady_clock::now();
    const demo::DemoUniverse universe = demo::generate_demo_universe(options);
    const auto generated = std::chrono::steady_clock::now();
    demo::write_demo_files(universe, out_dir);
    const auto written = std::chrono::steady_clock::now();
    const auto seconds = [](auto from, auto to) { return std::chrono::duration<double>(to - from).count(); };
    const long long observed = (universe.values.array() == universe.values.array()).count();
    std::printf("wrote %s: %zu dates (%s .. %s), %zu assets, %lld observed values, change at %s; "
                "generated in %.2f s, written in %.2f s\n",
                out_dir.c_str(), universe.dates.size(), universe.dates.front().iso().c_str(),
                universe.dates.back().iso().c_str(), universe.assets.size(), observed,
                universe.dates[universe.change_index].iso().c_str(), seconds(start, generated),
                seconds(generated, written));
  } catch (const std::exception& e) {
    std::fprintf(stderr, "factorwatch-demo-universe: %s\n", e.what());
    return 1;
  }
  return 0;
}

#include "demo_files.h"

#include <cmath>
#include <cstdio>
#include <memory>
#include <stdexcept>

namespace factorwatch::demo {
namespace {

// Buffered writer: a megabyte at a time through stdio keeps a 1-million-row file
// well under a second, and every failure surfaces with the file's name.
class CsvFile {
 public:
  explicit CsvFile(const std::filesystem::path& path) : path_(path), file_(std::fopen(path.c_str(), "wb")) {
    if (!file_) throw std::runtime_error("cannot open " + path_.string() + " for writing");
    buffer_.reserve(kChunk + 256);
  }
  ~CsvFile() {
    if (file_) std::fclose(file_);
  }
  CsvFile(const CsvFile&) = delete;
  CsvFile& operator=(const CsvFile&) = delete;

  CsvFile& text(const std::string& s) {
    buffer_ += s;
    return flush_if_full();
  }
  CsvFile& ch(char c) {
    buffer_ += c;
    return flush_if_full();
  }
  CsvFile& number(double v) {
    char digits[32];
    const int length = std::snprintf(digits, sizeof digits, "%.10g", v);
    buffer_.append(digits, static_cast<std::size_t>(length));
    return flush_if_full();
  }
  void close() {
    flush();
    const bool failed = std::fclose(file_) != 0;
    file_ = nullptr;
    if (failed) throw std::runtime_error("cannot finish writing " + path_.string());
  }

 private:
  static constexpr std::size_t kChunk = 1 << 20;
  CsvFile& flush_if_full() {
    if (buffer_.size() >= kChunk) flush();
    return *this;
  }
  void flush() {
    if (std::fwrite(buffer_.data(), 1, buffer_.size(), file_) != buffer_.size()) {
      throw std::runtime_error("cannot write " + path_.string());
    }
    buffer_.clear();
  }

  std::filesystem::path path_;
  std::FILE* file_;
  std::string buffer_;
};

void write_long(const DemoUniverse& u, const std::filesystem::path& path) {
  CsvFile out(path);
  out.text("date,asset,return\n");
  for (Eigen::Index t = 0; t < u.values.rows(); ++t) {
    const std::string date = u.dates[t].iso();
    for (Eigen::Index i = 0; i < u.values.cols(); ++i) {
      const double v = u.values(t, i);
      if (std::isnan(v)) continue;
      out.text(date).ch(',').text(u.assets[i]).ch(',').number(v).ch('\n');
    }
  }
  out.close();
}

void write_wide(const DemoUniverse& u, const std::filesystem::path& path) {
  CsvFile out(path);
  out.text("date");
  for (const auto& a : u.assets) out.ch(',').text(a);
  out.ch('\n');
  for (Eigen::Index t = 0; t < u.values.rows(); ++t) {
    out.text(u.dates[t].iso());
    for (Eigen::Index i = 0; i < u.values.cols(); ++i) {
      out.ch(',');
      if (!std::isnan(u.values(t, i))) out.number(u.values(t, i));
    }
    out.ch('\n');
  }
  out.close();
}

void write_loadings(const DemoUniverse& u, const Eigen::MatrixXd& loadings, const std::filesystem::path& path) {
  CsvFile out(path);
  out.text("asset");
  for (Eigen::Index j = 0; j < loadings.cols(); ++j) out.text(",f" + std::to_string(j + 1));
  out.ch('\n');
  for (Eigen::Index i = 0; i < loadings.rows(); ++i) {
    out.text(u.assets[i]);
    for (Eigen::Index j = 0; j < loadings.cols(); ++j) out.ch(',').number(loadings(i, j));
    out.ch('\n');
  }
  out.close();
}

void write_specific(const DemoUniverse& u, const std::filesystem::path& path) {
  CsvFile out(path);
  out.text("asset,specific_variance\n");
  for (Eigen::Index i = 0; i < u.specific_variance.size(); ++i) {
    out.text(u.assets[i]).ch(',').number(u.specific_variance(i)).ch('\n');
  }
  out.close();
}

void write_readme(const DemoUniverse& u, const std::filesystem::path& path) {
  CsvFile out(path);
  out.text(describe_planted(u));
  out.text(
      "\nFiles:\n"
      "  returns_long.csv               date,asset,return - one row per observed value; gaps have no row\n"
      "  returns_wide.csv               date then one column per asset; a gap is an empty cell\n"
      "  planted_loadings_before.csv    asset,f1..fk - the true L on dates before the change\n"
      "  planted_loadings_after.csv     asset,f1..fk - the true L from the change date on\n"
      "  planted_specific_variance.csv  asset,specific_variance - the true Psi diagonal\n"
      "  portfolio_benchmark.csv        asset,weight - demo-benchmark: every asset listed at the end, invented sizes\n"
      "  portfolio_book.json            demo-book: 60 long, 12 short positions and one delisted name (invented)\n"
      "Returns are simple daily returns in return units (0.01 = 1%); numbers have 10 significant digits.\n"
      "A fitted model recovers L only up to rotation and sign: compare after alignment.\n");
  out.close();
}

// CSV `asset,weight`, the format `factorwatch portfolio set` reads.
void write_portfolio_csv(const DemoPortfolio& p, const std::filesystem::path& path) {
  CsvFile out(path);
  out.text("asset,weight\n");
  for (const auto& [asset, weight] : p.weights) out.text(asset).ch(',').number(weight).ch('\n');
  out.close();
}

// The JSON form, with the as-of date and the benchmark in the file.
void write_portfolio_json(const DemoPortfolio& p, const std::filesystem::path& path) {
  CsvFile out(path);
  out.text("{\n  \"as_of\": \"" + p.as_of + "\",\n  \"benchmark\": \"" + p.benchmark + "\",\n  \"holdings\": [\n");
  for (std::size_t i = 0; i < p.weights.size(); ++i) {
    out.text("    {\"asset\": \"" + p.weights[i].first + "\", \"weight\": ").number(p.weights[i].second);
    out.text(i + 1 < p.weights.size() ? "},\n" : "}\n");
  }
  out.text("  ]\n}\n");
  out.close();
}

}  // namespace

std::vector<WrittenFile> write_demo_files(const DemoUniverse& u, const std::filesystem::path& dir) {
  std::error_code ec;
  std::filesystem::create_directories(dir, ec);
  if (ec) throw std::runtime_error("cannot create directory " + dir.string() + ": " + ec.message());

  write_long(u, dir / "returns_long.csv");
  write_wide(u, dir / "returns_wide.csv");
  write_loadings(u, u.loadings_before, dir / "planted_loadings_before.csv");
  write_loadings(u, u.loadings_after, dir / "planted_loadings_after.csv");
  write_specific(u, dir / "planted_specific_variance.csv");
  write_readme(u, dir / "README.txt");
  write_portfolio_csv(demo_benchmark(u), dir / "portfolio_benchmark.csv");
  write_portfolio_json(demo_book(u), dir / "portfolio_book.json");

  std::vector<WrittenFile> written;
  for (const char* name : {"returns_long.csv", "returns_wide.csv", "planted_loadings_before.csv",
                           "planted_loadings_after.csv", "planted_specific_variance.csv", "README.txt",
                           "portfolio_benchmark.csv", "portfolio_book.json"}) {
    written.push_back({name, std::filesystem::file_size(dir / name)});
  }
  return written;
}

}  // namespace factorwatch::demo

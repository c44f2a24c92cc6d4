#include "factor_returns_view.h"

#include <cmath>
#include <cstdio>
#include <vector>

#include "drift_view.h"
#include "factorwatch/engine/caution.h"
#include "text_format.h"
#include "window_heading.h"

namespace factorwatch::server {
namespace {

using nlohmann::ordered_json;

// k factor cells of v (empty where v is shorter or NaN: a date that could not be scored).
void append_factor_cells(std::string& out, const Eigen::VectorXd& v, Eigen::Index k) {
  for (Eigen::Index j = 0; j < k; ++j) {
    out += ',';
    if (j < v.size()) out += csv_number(v(j));
  }
}

// "f1 +0.1234  f2 -1.0000" columns for the tables; "-" where not scored.
void append_factor_columns(std::string& out, const Eigen::VectorXd& v, Eigen::Index k) {
  char cell[32];
  for (Eigen::Index j = 0; j < k; ++j) {
    if (j < v.size() && std::isfinite(v(j))) std::snprintf(cell, sizeof cell, " %+9.4f", v(j));
    else std::snprintf(cell, sizeof cell, " %9s", "-");
    out += cell;
  }
}

void append_factor_headings(std::string& out, Eigen::Index k) {
  char cell[32];
  for (Eigen::Index j = 0; j < k; ++j) {
    std::snprintf(cell, sizeof cell, " %9s", pipeline::factor_name(j).c_str());
    out += cell;
  }
}

std::string range_text(const pipeline::FactorReturnSeriesAnswer& a) {
  return "windows " + (a.from ? "from " + a.from->iso() : std::string("from the first")) + " " +
         (a.to ? "to " + a.to->iso() : std::string("to the latest"));
}

// The series' rows and skipped windows, merged by as-of date for the CSV and the table.
struct SeriesLine {
  const pipeline::FactorReturnRow* row = nullptr;      // a usable window
  const pipeline::SkippedWindow* skipped = nullptr;    // or one that gave no row
  engine::Date as_of() const { return row ? row->as_of : skipped->as_of; }
};

std::vector<SeriesLine> series_lines(const pipeline::FactorReturnSeries& s) {
  std::vector<SeriesLine> lines;
  std::size_t r = 0, k = 0;
  while (r < s.rows.size() || k < s.skipped.size()) {
    const bool take_row = k == s.skipped.size() || (r < s.rows.size() && s.rows[r].as_of <= s.skipped[k].as_of);
    SeriesLine line;
    if (take_row) line.row = &s.rows[r++];
    else line.skipped = &s.skipped[k++];
    lines.push_back(line);
  }
  return lines;
}

std::string window_basis_heading(const pipeline::WindowFactorReturns& a) {
  const pipeline::SelectedWindow& s = a.window;
  std::string text = window_csv_heading(s) + "; method " + engine::to_string(a.scores.method) + ", " +
                     pipeline::factor_returns_description(a.scores.method) + " under the window's served factors (" +
                     pipeline::factor_basis_text(s) + "); " + std::to_string(a.scores.modelled_assets) + " modelled assets";
  if (s.window.stale) text += "; STALE: returns in this window changed since it was fitted";
  if (!s.note.empty()) text += "; note: " + s.note;
  return text;
}

std::string unscored_reason(const engine::FactorScores& s, std::size_t date) {
  for (const engine::UnscoredDate& u : s.unscored)
    if (static_cast<std::size_t>(u.row) == date) return u.reason;
  return "";
}

}  // namespace

std::string factor_return_series_csv(const pipeline::FactorReturnSeriesAnswer& a) {
  const Eigen::Index k = pipeline::series_factor_columns(a);
  const engine::ScoreMethod method = a.series.method;
  std::string out = csv_caution_line();
  out += "# model " + a.model.name + " version " + std::to_string(a.model.version) + ", " + range_text(a) +
         "; method " + engine::to_string(method) + ", " + pipeline::factor_returns_description(method) +
         " of each window's as-of date under that window's served factors (" + pipeline::series_basis_text(a.model.config) +
         ")\n";
  out += "as_of,first_date,alignment";
  for (Eigen::Index j = 0; j < k; ++j) out += "," + pipeline::factor_name(j);
  out += ",assets_used,reason\n";
  for (const SeriesLine& line : series_lines(a.series)) {
    if (line.skipped) {
      out += line.skipped->as_of.iso() + ",,";
      for (Eigen::Index j = 0; j < k; ++j) out += ',';
      out += ",," + csv_field(line.skipped->reason) + "\n";
      continue;
    }
    const pipeline::FactorReturnRow& r = *line.row;
    out += r.as_of.iso() + "," + r.window_first_date.iso() + "," + csv_field(r.alignment);
    append_factor_cells(out, r.scores, k);
    out += "," + std::to_string(r.assets_used) + "," + csv_field(r.unscored_reason) + "\n";
  }
  return out;
}

ordered_json factor_return_series_json(const pipeline::FactorReturnSeriesAnswer& a) {
  const engine::ScoreMethod method = a.series.method;
  ordered_json j;
  j["caution"] = engine::kCaution;
  j["model"] = a.model.name;
  j["version"] = a.model.version;
  j["method"] = engine::to_string(method);
  j["description"] = pipeline::factor_returns_description(method) +
                     " of each window's as-of date under that window's served factors";
  j["factor_basis"] = pipeline::series_basis_text(a.model.config);
  j["factors"] = pipeline::series_factor_columns(a);
  j["from"] = a.from;
  j["to"] = a.to;
  ordered_json rows = ordered_json::array();
  for (const pipeline::FactorReturnRow& r : a.series.rows) {
    ordered_json row;
    row["as_of"] = r.as_of;
    row["first_date"] = r.window_first_date;
    row["alignment"] = r.alignment;
    row["factor_returns"] = numbers_json(r.scores);
    row["assets_used"] = r.assets_used;
    row["reason"] = r.unscored_reason.empty() ? ordered_json() : ordered_json(r.unscored_reason);
    rows.push_back(std::move(row));
  }
  j["rows"] = std::move(rows);
  ordered_json skipped = ordered_json::array();
  for (const pipeline::SkippedWindow& s : a.series.skipped) skipped.push_back({{"as_of", s.as_of}, {"reason", s.reason}});
  j["skipped"] = std::move(skipped);
  return j;
}

std::string factor_return_series_table(const pipeline::FactorReturnSeriesAnswer& a) {
  const Eigen::Index k = pipeline::series_factor_columns(a);
  const engine::ScoreMethod method = a.series.method;
  char line[256];
  std::snprintf(line, sizeof line, "model %s, version %d: factor-return series, method %s, %zu window%s (%zu skipped)\n",
                a.model.name.c_str(), a.model.version, engine::to_string(method), a.series.rows.size(),
                a.series.rows.size() == 1 ? "" : "s", a.series.skipped.size());
  std::string out = line;
  out += pipeline::factor_returns_description(method) + "\nof each window's as-of date under that window's served factors (" +
         pipeline::series_basis_text(a.model.config) + ")\n\n";
  std::snprintf(line, sizeof line, "%-10s  %-10s  %-16s", "as of", "first date", "alignment");
  out += line;
  append_factor_headings(out, k);
  out += "  assets\n";
  for (const SeriesLine& l : series_lines(a.series)) {
    if (l.skipped) {
      std::snprintf(line, sizeof line, "%-10s  skipped: %s\n", l.skipped->as_of.iso().c_str(), l.skipped->reason.c_str());
      out += line;
      continue;
    }
    const pipeline::FactorReturnRow& r = *l.row;
    std::snprintf(line, sizeof line, "%-10s  %-10s  %-16s", r.as_of.iso().c_str(), r.window_first_date.iso().c_str(),
                  r.alignment.c_str());
    out += line;
    append_factor_columns(out, r.scores, k);
    std::snprintf(line, sizeof line, "  %6lld", static_cast<long long>(r.assets_used));
    out += line;
    if (!r.unscored_reason.empty()) out += "  not scored: " + r.unscored_reason;
    out += "\n";
  }
  if (a.series.rows.empty() && a.series.skipped.empty())
    out += "(no windows in this range; factorwatch refresh " + a.model.name + " fits them)\n";
  out += "\nf1..: each factor's return on the window's as-of date, in the factor's units (its variance is\n"
         "the window's factor covariance: 1 for orthogonal factors); assets: the window's modelled assets\n"
         "with a return that date.\n"
         "--window DATE shows every date of one window; --method regression gives the shrunk scores.\n";
  return out;
}

std::string window_factor_returns_csv(const pipeline::WindowFactorReturns& a) {
  const engine::FactorScores& s = a.scores;
  const Eigen::Index k = s.scores.cols();
  std::string out = csv_caution_line();
  out += window_basis_heading(a) + "\n";
  out += "date";
  for (Eigen::Index j = 0; j < k; ++j) out += "," + pipeline::factor_name(j);
  out += ",assets_used,reason\n";
  for (std::size_t t = 0; t < s.dates.size(); ++t) {
    const auto row = static_cast<Eigen::Index>(t);
    out += s.dates[t].iso();
    append_factor_cells(out, s.scores.row(row).transpose(), k);
    out += "," + std::to_string(s.assets_used[t]) + "," + csv_field(unscored_reason(s, t)) + "\n";
  }
  return out;
}

ordered_json window_factor_returns_json(const pipeline::WindowFactorReturns& a) {
  const engine::FactorScores& s = a.scores;
  ordered_json j = window_json_heading(a.window);
  j["stale"] = a.window.window.stale;
  if (!a.window.note.empty()) j["note"] = a.window.note;
  j["method"] = engine::to_string(s.method);
  j["description"] = pipeline::factor_returns_description(s.method) + " under the window's served factors";
  j["factor_basis"] = pipeline::factor_basis_text(a.window);
  j["factors"] = s.scores.cols();
  j["modelled_assets"] = s.modelled_assets;
  ordered_json dates = ordered_json::array();
  for (std::size_t t = 0; t < s.dates.size(); ++t) {
    const std::string reason = unscored_reason(s, t);
    ordered_json d;
    d["date"] = s.dates[t];
    d["factor_returns"] = numbers_json(s.scores.row(static_cast<Eigen::Index>(t)).transpose());
    d["assets_used"] = s.assets_used[t];
    d["reason"] = reason.empty() ? ordered_json() : ordered_json(reason);
    dates.push_back(std::move(d));
  }
  j["dates"] = std::move(dates);
  return j;
}

std::string window_factor_returns_table(const pipeline::WindowFactorReturns& a) {
  const engine::FactorScores& s = a.scores;
  const pipeline::SelectedWindow& w = a.window;
  const Eigen::Index k = s.scores.cols();
  char line[256];
  std::snprintf(line, sizeof line, "model %s, version %d: window %s .. %s, method %s, %lld modelled assets%s\n",
                w.model.name.c_str(), w.model.version, w.window.first_date.iso().c_str(), w.window.as_of.iso().c_str(),
                engine::to_string(s.method), static_cast<long long>(s.modelled_assets),
                w.window.stale ? "; STALE, run factorwatch refresh" : "");
  std::string out = line;
  if (!w.note.empty()) out += "note: " + w.note + "\n";
  out += pipeline::factor_returns_description(s.method) + "\nunder the window's served factors (" + pipeline::factor_basis_text(w) +
         ")\n\n";
  std::snprintf(line, sizeof line, "%-10s", "date");
  out += line;
  append_factor_headings(out, k);
  out += "  assets\n";
  for (std::size_t t = 0; t < s.dates.size(); ++t) {
    std::snprintf(line, sizeof line, "%-10s", s.dates[t].iso().c_str());
    out += line;
    append_factor_columns(out, s.scores.row(static_cast<Eigen::Index>(t)).transpose(), k);
    std::snprintf(line, sizeof line, "  %6lld", static_cast<long long>(s.assets_used[t]));
    out += line;
    const std::string reason = unscored_reason(s, t);
    if (!reason.empty()) out += "  not scored: " + reason;
    out += "\n";
  }
  out += "\nf1..: each factor's return on the date, in the factor's units (its variance is the window's\n"
         "factor covariance: 1 for orthogonal factors); assets: the modelled assets with a return that date.\n";
  return out;
}

}  // namespace factorwatch::server

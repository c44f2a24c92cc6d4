#include "window_heading.h"

#include "factorwatch/engine/caution.h"

namespace factorwatch::server {

nlohmann::ordered_json window_json_heading(const pipeline::SelectedWindow& s) {
  nlohmann::ordered_json j;
  j["caution"] = engine::kCaution;
  j["model"] = s.model.name;
  j["version"] = s.model.version;
  j["as_of"] = s.window.as_of;
  j["first_date"] = s.window.first_date;
  return j;
}

std::string window_csv_heading(const pipeline::SelectedWindow& s) {
  // The note (a later window that failed, a date with no window of its own) rides on the
  // heading: a spreadsheet user sees which window this is and why.
  return "# model " + s.model.name + " version " + std::to_string(s.model.version) + ", window " +
         s.window.first_date.iso() + " .. " + s.window.as_of.iso() + (s.note.empty() ? "" : "; note: " + s.note);
}

}  // namespace factorwatch::server

#include "window_heading.h"

#include "factorwatch/engine/caution.h"

namespace factorwatch::server {

nlohmann::ordered_json window_json_heading(const SelectedWindow& s) {
  nlohmann::ordered_json j;
  j["caution"] = engine::kCaution;
  j["model"] = s.model.name;
  j["version"] = s.model.version;
  j["as_of"] = s.window.as_of;
  j["first_date"] = s.window.first_date;
  return j;
}

std::string window_csv_heading(const SelectedWindow& s) {
  return "# model " + s.model.name + " version " + std::to_string(s.model.version) + ", window " +
         s.window.first_date + " .. " + s.window.as_of;
}

std::string factor_basis_text(const SelectedWindow& s) {
  std::string text = std::string("rotation ") + engine::to_string(s.model.config.rotation) + ", ";
  const auto& a = s.window.alignment;
  if (!a) return text + "not aligned yet";
  if (a->status != "aligned") return text + "alignment: " + a->status;
  return text + "aligned onto " + (a->reference_as_of.empty() ? "the smoothed reference" : a->reference_as_of) +
         " (" + a->reference + ")";
}

}  // namespace factorwatch::server

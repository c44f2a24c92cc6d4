#include "factorwatch/storage/model_fields.h"

#include <cmath>
#include <cstdio>
#include <set>

#include "cell_parse.h"
#include "factorwatch/engine/factor_limit.h"
#include "factorwatch/storage/identifier_rule.h"

namespace factorwatch::storage {
namespace {

using nlohmann::json;
using nlohmann::ordered_json;
using engine::bad_number;
using Check = std::optional<engine::Failure>;
using Why = std::optional<std::string>;

// Whole numbers beyond this are refused before they reach an int.
constexpr long long kLargestWhole = 1000000000LL;

Why whole(const json& value, int& target) {
  if (!value.is_number_integer()) return "must be a whole number";
  const auto n = value.get<long long>();
  if (n < -kLargestWhole || n > kLargestWhole) return "out of range";
  target = static_cast<int>(n);
  return std::nullopt;
}

Why real(const json& value, double& target, const char* why = "must be a number") {
  if (!value.is_number()) return why;
  target = value.get<double>();
  return std::nullopt;
}

// A text that is not a date never gets here: set_model_field refuses it, naming the value.
Why date_or_default(const json& value, std::optional<engine::Date>& target, const char* why) {
  if (value.is_null()) target.reset();
  else if (!value.is_string()) return why;
  else if (const std::string text = value.get<std::string>(); text.empty()) target.reset();  // stored: "" = none
  else if (auto date = engine::Date::from_iso(text)) target = date;
  else return "not a date in the form yyyy-mm-dd";
  return std::nullopt;
}

// As stored: "" for none.
ordered_json date_json(const std::optional<engine::Date>& date) { return date ? date->iso() : std::string(); }

// "must be \"a\", \"b\" or \"c\"".
std::string one_of(const std::vector<std::string>& words) {
  std::string text = "must be ";
  for (std::size_t i = 0; i < words.size(); ++i)
    text += (i == 0 ? "" : i + 1 == words.size() ? " or " : ", ") + ("\"" + words[i] + "\"");
  return text;
}

template <typename Parse, typename T>
Why choice(const json& value, Parse parse, T& target, const std::vector<std::string>& words) {
  const auto parsed = value.is_string() ? parse(value.get<std::string>()) : std::nullopt;
  if (!parsed) return one_of(words);
  target = *parsed;
  return std::nullopt;
}

std::string integer_text(int n) { return std::to_string(n); }
// As std::to_string writes doubles ("0.800000"): the messages a configuration gives.
std::string real_text(double x) { return std::to_string(x); }

Check share_of_one(const char* field, double x) {
  if (x >= 0 && x <= 1) return std::nullopt;
  return bad_number(field, real_text(x), "must be in [0, 1] (0: no alert)");
}

const std::vector<std::string> kMethods = {"pca", "principal-axis", "ml"};
const std::vector<std::string> kBases = {"covariance", "correlation"};
const std::vector<std::string> kRotations = {"none", "varimax", "promax"};
const std::vector<std::string> kAlignTo = {"previous", "pinned", "smoothed"};
const std::vector<std::string> kYesNo = {"yes", "no"};

std::vector<ModelField> build_fields() {
  std::vector<ModelField> f;
  f.push_back({"universe", FieldKind::universe, "FILE|all",
               "File listing the assets to fit, one per line; 'all' for every stored asset (default)", {}, "", false,
               [](const ModelConfig& c) { return ordered_json(c.universe); },
               [](ModelConfig& c, const json& v) -> Why {
                 const char* why = "must be an array of asset names, or \"all\"";
                 if (v.is_string() && v.get<std::string>() == "all") {
                   c.universe.clear();
                   return std::nullopt;
                 }
                 if (!v.is_array()) return why;
                 std::vector<std::string> names;
                 for (const auto& name : v) {
                   if (!name.is_string()) return why;
                   names.push_back(name.get<std::string>());
                 }
                 c.universe = std::move(names);
                 return std::nullopt;
               },
               [](const ModelConfig& c) -> Check {
                 std::set<std::string> seen;
                 for (const std::string& a : c.universe) {
                   if (auto problem = identifier_problem(a)) return bad_number("universe", "", "the asset name " + *problem);
                   if (!seen.insert(a).second)
                     return bad_number("universe", "", "asset " + detail::quoted(a) + " is listed twice");
                 }
                 return std::nullopt;
               }});
  f.push_back({"window", FieldKind::whole_number, "DATES", "Dates per window (default {default})", {}, "", false,
               [](const ModelConfig& c) { return ordered_json(c.window); },
               [](ModelConfig& c, const json& v) { return whole(v, c.window); },
               [](const ModelConfig& c) -> Check {
                 if (c.window < 2) return bad_number("window", integer_text(c.window), "must be at least 2 dates");
                 return std::nullopt;
               }});
  f.push_back({"step", FieldKind::whole_number, "DATES", "Fit a window every this many dates (default {default})", {},
               "", false, [](const ModelConfig& c) { return ordered_json(c.step); },
               [](ModelConfig& c, const json& v) { return whole(v, c.step); },
               [](const ModelConfig& c) -> Check {
                 if (c.step < 1) return bad_number("step", integer_text(c.step), "must be at least 1 date");
                 return std::nullopt;
               }});
  f.push_back({"method", FieldKind::choice, "", "pca, principal-axis or ml (default {default})", kMethods, "", false,
               [](const ModelConfig& c) { return ordered_json(engine::to_string(c.fit.method)); },
               [](ModelConfig& c, const json& v) { return choice(v, engine::parse_method, c.fit.method, kMethods); },
               [](const ModelConfig&) -> Check { return std::nullopt; }});
  f.push_back({"factors", FieldKind::whole_number, "K", "Number of factors (default {default})", {}, "", false,
               [](const ModelConfig& c) { return ordered_json(c.fit.factors); },
               [](ModelConfig& c, const json& v) { return whole(v, c.fit.factors); },
               [](const ModelConfig& c) -> Check {
                 const int k = c.fit.factors;
                 if (k < 1) return bad_number("factors", integer_text(k), "must be at least 1");
                 if (k >= c.window)
                   return bad_number("factors", integer_text(k),
                                     "must be below the window length (" + integer_text(c.window) + " dates)");
                 // An explicit universe bounds every window's assets, so a k it can never
                 // identify is refused now rather than failing every window later. With
                 // every stored asset the count can grow: the surfaces only warn.
                 if (!c.universe.empty()) {
                   const auto n = static_cast<long long>(c.universe.size());
                   return engine::too_many_factors(c.fit.method, k, n, c.window,
                                                   "a universe of " + std::to_string(n) + (n == 1 ? " asset" : " assets") +
                                                       " with windows of " + integer_text(c.window) + " dates");
                 }
                 return std::nullopt;
               }});
  f.push_back({"basis", FieldKind::choice, "", "covariance or correlation (default {default})", kBases, "", false,
               [](const ModelConfig& c) { return ordered_json(engine::to_string(c.fit.basis)); },
               [](ModelConfig& c, const json& v) { return choice(v, engine::parse_basis, c.fit.basis, kBases); },
               [](const ModelConfig&) -> Check { return std::nullopt; }});
  f.push_back({"weighting", FieldKind::follows, "", "", {"equal", "ewma"}, "", false,
               [](const ModelConfig& c) {
                 return ordered_json(c.fit.weighting == engine::Weighting::ewma ? "ewma" : "equal");
               },
               [](ModelConfig& c, const json& v) -> Why {
                 if (!v.is_string() || (v != "ewma" && v != "equal")) return "must be \"equal\" or \"ewma\"";
                 c.fit.weighting = v == "ewma" ? engine::Weighting::ewma : engine::Weighting::equal;
                 return std::nullopt;
               },
               [](const ModelConfig&) -> Check { return std::nullopt; }});
  f.push_back({"half_life", FieldKind::half_life, "DATES", "Exponential weights with this half-life", {}, "", false,
               [](const ModelConfig& c) { return ordered_json(c.fit.half_life); },
               [](ModelConfig& c, const json& v) -> Why {
                 if (v.is_null()) {
                   c.fit.weighting = engine::Weighting::equal;
                   c.fit.half_life = 0;
                 } else if (v.is_number()) {
                   c.fit.weighting = engine::Weighting::ewma;
                   c.fit.half_life = v.get<double>();
                 } else {
                   return "must be a number of dates (null or 0: equal weights)";
                 }
                 return std::nullopt;
               },
               [](const ModelConfig& c) -> Check {
                 if (c.fit.weighting == engine::Weighting::ewma && !(c.fit.half_life > 0 && std::isfinite(c.fit.half_life)))
                   return bad_number("half_life", "", "exponential weighting needs a half-life above 0 dates");
                 return std::nullopt;
               }});
  f.push_back({"min_coverage", FieldKind::number, "SHARE", "Share of a window's dates an asset needs (default {default})",
               {}, "", false, [](const ModelConfig& c) { return ordered_json(c.fit.min_coverage); },
               [](ModelConfig& c, const json& v) { return real(v, c.fit.min_coverage, "must be a number in (0, 1]"); },
               [](const ModelConfig& c) -> Check {
                 const double x = c.fit.min_coverage;
                 if (!(x > 0 && x <= 1)) return bad_number("min_coverage", real_text(x), "must be in (0, 1]");
                 return std::nullopt;
               }});
  f.push_back({"first_as_of", FieldKind::date_or_default, "DATE",
               "Fit no window ending before this date ('none': no limit)", {}, "none", false,
               [](const ModelConfig& c) { return date_json(c.first_as_of); },
               [](ModelConfig& c, const json& v) {
                 return date_or_default(v, c.first_as_of, "must be a date yyyy-mm-dd, or null");
               },
               [](const ModelConfig&) -> Check { return std::nullopt; }});
  f.push_back({"tolerance", FieldKind::number, "X",
               "Where ml and principal-axis fits stop: ml, the largest scaled gradient of the log-likelihood; "
               "principal-axis, the largest change of a communality (default {default})",
               {}, "", true, [](const ModelConfig& c) { return ordered_json(c.fit.tolerance); },
               [](ModelConfig& c, const json& v) { return real(v, c.fit.tolerance); },
               [](const ModelConfig& c) -> Check {
                 const double x = c.fit.tolerance;
                 // Above 0.01 "converged" would be far from the optimum for either meaning.
                 if (!(x > 0 && x <= 0.01)) return bad_number("tolerance", detail::shortest(x), "must be in (0, 0.01]");
                 return std::nullopt;
               }});
  f.push_back({"rotation", FieldKind::choice, "",
               "Rotation of every window's loadings: none, varimax or promax (default {default})", kRotations, "",
               true, [](const ModelConfig& c) { return ordered_json(engine::to_string(c.rotation.method)); },
               [](ModelConfig& c, const json& v) {
                 return choice(v, engine::parse_rotation, c.rotation.method, kRotations);
               },
               [](const ModelConfig&) -> Check { return std::nullopt; }});
  f.push_back({"kaiser_normalize", FieldKind::yes_no, "",
               "Scale each asset's row to unit length while rotating (default {default})", kYesNo, "", true,
               [](const ModelConfig& c) { return ordered_json(c.rotation.kaiser_normalize); },
               [](ModelConfig& c, const json& v) -> Why {
                 if (!v.is_boolean()) return "must be true or false";
                 c.rotation.kaiser_normalize = v.get<bool>();
                 return std::nullopt;
               },
               [](const ModelConfig&) -> Check { return std::nullopt; }});
  f.push_back({"align_to", FieldKind::choice, "",
               "Align each window's factors onto the previous window, the pinned window or a smoothed reference of "
               "past windows (default {default})",
               kAlignTo, "", true, [](const ModelConfig& c) { return ordered_json(to_string(c.align_to)); },
               [](ModelConfig& c, const json& v) { return choice(v, parse_align_to, c.align_to, kAlignTo); },
               [](const ModelConfig&) -> Check { return std::nullopt; }});
  f.push_back({"pinned_window", FieldKind::date_or_default, "DATE|first",
               "As-of date of the window drift is also measured against (and aligned onto with --align-to pinned); "
               "'first': the model's first window (default)",
               {}, "first", true, [](const ModelConfig& c) { return date_json(c.pinned_window); },
               [](ModelConfig& c, const json& v) {
                 return date_or_default(v, c.pinned_window,
                                        "must be a date yyyy-mm-dd, or null (the model's first window)");
               },
               [](const ModelConfig&) -> Check { return std::nullopt; }});
  f.push_back({"smoothing_half_life", FieldKind::number, "N",
               "Half-life of the smoothed reference, in windows (default {default})", {}, "", true,
               [](const ModelConfig& c) { return ordered_json(c.smoothing_half_life); },
               [](ModelConfig& c, const json& v) { return real(v, c.smoothing_half_life); },
               [](const ModelConfig& c) -> Check {
                 const double x = c.smoothing_half_life;
                 if (!(x > 0 && std::isfinite(x)))
                   return bad_number("smoothing_half_life", real_text(x), "must be above 0 windows");
                 return std::nullopt;
               }});
  f.push_back({"min_shared_assets", FieldKind::whole_number, "N",
               "Fewer assets shared with the reference and a window is left as fitted (default {default})", {}, "",
               true, [](const ModelConfig& c) { return ordered_json(c.min_shared_assets); },
               [](ModelConfig& c, const json& v) { return whole(v, c.min_shared_assets); },
               [](const ModelConfig& c) -> Check {
                 if (c.min_shared_assets < 1)
                   return bad_number("min_shared_assets", integer_text(c.min_shared_assets), "must be at least 1");
                 return std::nullopt;
               }});
  f.push_back({"alert_below", FieldKind::number, "X",
               "Alert when a factor's congruence with the previous window is below this (default {default}; 0: no "
               "alerts)",
               {}, "", true, [](const ModelConfig& c) { return ordered_json(c.alert_below); },
               [](ModelConfig& c, const json& v) { return real(v, c.alert_below); },
               [](const ModelConfig& c) { return share_of_one("alert_below", c.alert_below); }});
  f.push_back({"alert_below_pinned", FieldKind::number, "X",
               "Alert when a factor's congruence with the pinned window falls below this (default {default}; 0: no "
               "alerts)",
               {}, "", true, [](const ModelConfig& c) { return ordered_json(c.alert_below_pinned); },
               [](ModelConfig& c, const json& v) { return real(v, c.alert_below_pinned); },
               [](const ModelConfig& c) { return share_of_one("alert_below_pinned", c.alert_below_pinned); }});
  f.push_back({"max_iterations", FieldKind::whole_number, "N",
               "Iteration limit of ml and principal-axis fits; a window that reaches it is kept and marked "
               "(default {default})",
               {}, "", true, [](const ModelConfig& c) { return ordered_json(c.fit.max_iterations); },
               [](ModelConfig& c, const json& v) { return whole(v, c.fit.max_iterations); },
               [](const ModelConfig& c) -> Check {
                 if (c.fit.max_iterations < 1)
                   return bad_number("max_iterations", integer_text(c.fit.max_iterations), "must be at least 1");
                 return std::nullopt;
               }});
  return f;
}

}  // namespace

const std::vector<ModelField>& model_fields() {
  static const std::vector<ModelField> fields = build_fields();
  return fields;
}

const ModelField* find_model_field(std::string_view member) {
  for (const ModelField& f : model_fields())
    if (member == f.member) return &f;
  return nullptr;
}

std::string default_text(const ModelField& field) {
  const ordered_json value = field.get(ModelConfig{});
  if (value.is_boolean()) return value.get<bool>() ? "yes" : "no";
  if (value.is_string()) return value.get<std::string>();
  if (value.is_number_integer()) return std::to_string(value.get<long long>());
  if (value.is_number()) {
    char text[32];
    std::snprintf(text, sizeof text, "%g", value.get<double>());
    return text;
  }
  return value.dump();
}

std::string help_text(const ModelField& field) {
  std::string help = field.help;
  const auto at = help.find("{default}");
  if (at != std::string::npos) help.replace(at, 9, default_text(field));
  return help;
}

std::optional<engine::Failure> set_model_field(const ModelField& field, ModelConfig& config, const json& value) {
  const auto why = field.set(config, value);
  if (!why) return std::nullopt;
  // A date names the text it could not read, as every other date input does.
  const bool bad_date = field.kind == FieldKind::date_or_default && value.is_string();
  return engine::failure(engine::FailureKind::bad_input, field.member, bad_date ? value.get<std::string>() : "", *why);
}

engine::Failure unknown_member(const std::string& member) {
  std::string known;
  for (const ModelField& f : model_fields())
    if (f.kind != FieldKind::follows) known += (known.empty() ? "" : ", ") + std::string(f.member);
  return engine::failure(engine::FailureKind::bad_input, member, "", "unknown member; known: " + known);
}

}  // namespace factorwatch::storage

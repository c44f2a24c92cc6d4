// One structured failure (engine/failure.h), rendered per surface: the command line names
// the option a user typed, HTTP the query parameter or member a client sent; one map from
// kind to exit code, one to HTTP status. The checks: every field a model configuration can
// fail on is an option `model set` really has and a member PUT /v1/models really reads;
// the engine's fit options likewise for `fit`; and the maps agree on which failures the
// user can fix. Returns are planted-structure data (invented, for tests).
#include <gtest/gtest.h>

#include <CLI/CLI.hpp>
#include <cmath>
#include <limits>
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "cli_common.h"
#include "factorwatch/storage/model_fields.h"
#include "cli_failure.h"
#include "endpoint_helpers.h"
#include "factorwatch/engine/failure.h"
#include "factorwatch/engine/fit.h"
#include "factorwatch/engine/risk.h"
#include "factorwatch/storage/models.h"
#include "fit_command.h"
#include "model_command.h"
#include "model_definition.h"

namespace {

namespace fe = factorwatch::engine;
namespace fs = factorwatch::server;
using factorwatch::storage::ModelConfig;

constexpr fe::FailureKind kKinds[] = {fe::FailureKind::bad_input, fe::FailureKind::unknown_name,
                                      fe::FailureKind::not_stored, fe::FailureKind::not_usable,
                                      fe::FailureKind::rejected};

TEST(FailureText, TheFieldTheValueAndTheRuleInOneShape) {
  fe::Failure f = fe::failure(fe::FailureKind::bad_input, "from", "2021-13-01", "not a date in the form yyyy-mm-dd");
  EXPECT_EQ(fe::describe(f, "option '--from'"), "option '--from' = '2021-13-01': not a date in the form yyyy-mm-dd");
  EXPECT_EQ(fe::describe(f, ""), "not a date in the form yyyy-mm-dd");
  EXPECT_EQ(fe::describe(fe::bad_number("factors", "0", "must be at least 1")), "option 'factors' = 0: must be at least 1");
  f.value.clear();
  EXPECT_EQ(fe::describe(f, "member 'from'"), "member 'from': not a date in the form yyyy-mm-dd");
}

// The one map each: what the user can fix in the request is exit 2 and a 4xx other than
// 409; what the job found unusable or missing is exit 1. Every kind has both.
TEST(FailureMaps, ExitCodeAndStatusAgreeOnWhoCanFixIt) {
  for (fe::FailureKind kind : kKinds) {
    const int code = fs::exit_code(kind);
    const int status = fs::http_status(kind);
    EXPECT_TRUE(code == fs::kExitBadInput || code == fs::kExitFailed) << static_cast<int>(kind);
    EXPECT_GE(status, 400);
    EXPECT_LT(status, 500);
  }
  EXPECT_EQ(fs::http_status(fe::FailureKind::bad_input), 400);
  EXPECT_EQ(fs::http_status(fe::FailureKind::unknown_name), 404);
  EXPECT_EQ(fs::http_status(fe::FailureKind::not_stored), 404);
  EXPECT_EQ(fs::http_status(fe::FailureKind::not_usable), 409);
  EXPECT_EQ(fs::http_status(fe::FailureKind::rejected), 422);
  EXPECT_EQ(fs::exit_code(fe::FailureKind::bad_input), fs::kExitBadInput);
  EXPECT_EQ(fs::exit_code(fe::FailureKind::unknown_name), fs::kExitBadInput);
  EXPECT_EQ(fs::exit_code(fe::FailureKind::rejected), fs::kExitBadInput);
  EXPECT_EQ(fs::exit_code(fe::FailureKind::not_stored), fs::kExitFailed);
  EXPECT_EQ(fs::exit_code(fe::FailureKind::not_usable), fs::kExitFailed);
}

// One configuration breaking each rule of ModelConfig::FirstFailure in turn, with the
// member it names.
struct BrokenConfig {
  const char* member;
  void (*breaks)(ModelConfig&);
};
const std::vector<BrokenConfig>& broken_configs() {
  static const std::vector<BrokenConfig> cases = {
      {"window", [](ModelConfig& c) { c.window = 1; }},
      {"step", [](ModelConfig& c) { c.step = 0; }},
      {"factors", [](ModelConfig& c) { c.fit.factors = 0; }},
      {"factors", [](ModelConfig& c) { c.fit.factors = c.window; }},
      {"half_life", [](ModelConfig& c) { c.fit.weighting = fe::Weighting::ewma, c.fit.half_life = 0; }},
      {"tolerance", [](ModelConfig& c) { c.fit.tolerance = 0.5; }},
      {"min_coverage", [](ModelConfig& c) { c.fit.min_coverage = 1.5; }},
      {"smoothing_half_life", [](ModelConfig& c) { c.smoothing_half_life = std::nan(""); }},
      {"min_shared_assets", [](ModelConfig& c) { c.min_shared_assets = 0; }},
      {"alert_below", [](ModelConfig& c) { c.alert_below = 1.5; }},
      {"alert_below_pinned", [](ModelConfig& c) { c.alert_below_pinned = -0.1; }},
      {"universe", [](ModelConfig& c) { c.universe = {"ZQ-1", "ZQ-1"}; }},
      {"max_iterations", [](ModelConfig& c) { c.fit.max_iterations = 0; }},
  };
  return cases;
}

// A model's dates are read when set (a configuration holds dates, not text): a text that is
// not a date is refused there, naming the member and the text on both surfaces.
TEST(FailureText, AModelDateThatIsNotADateIsRefusedWhenSetNamingTheMemberAndTheText) {
  for (const auto& [member, text] : std::vector<std::pair<std::string, std::string>>{
           {"first_as_of", "2021-02-30"}, {"pinned_window", "soon"}, {"first_as_of", "2021-2-3"}}) {
    ModelConfig config;
    const auto f = factorwatch::storage::set_model_field(*factorwatch::storage::find_model_field(member), config,
                                                         nlohmann::json(text));
    ASSERT_TRUE(f) << member << " " << text;
    EXPECT_EQ(f->kind, fe::FailureKind::bad_input);
    EXPECT_EQ(fs::failure_text(*f, true), "member '" + member + "' = '" + text + "': not a date in the form yyyy-mm-dd");
    std::string flag = "--" + member;
    for (char& ch : flag) if (ch == '_') ch = '-';
    EXPECT_EQ(fs::cli_text(*f), "option '" + flag + "' = '" + text + "': not a date in the form yyyy-mm-dd");
    EXPECT_FALSE(config.first_as_of || config.pinned_window);  // nothing set
  }
  ModelConfig config;
  EXPECT_FALSE(factorwatch::storage::set_model_field(*factorwatch::storage::find_model_field("first_as_of"), config,
                                                     nlohmann::json("2024-02-29")));
  EXPECT_EQ(config.first_as_of, fe::Date::from_iso("2024-02-29"));
  EXPECT_FALSE(factorwatch::storage::set_model_field(*factorwatch::storage::find_model_field("first_as_of"), config,
                                                     nlohmann::json()));
  EXPECT_FALSE(config.first_as_of);  // null: as early as the data allow
}

TEST(FailureText, EveryModelRuleNamesAnOptionOfModelSetAndAMemberOfTheDefinition) {
  CLI::App app;
  fs::ModelArguments arguments;
  fs::add_model_command(app, arguments);
  for (const BrokenConfig& c : broken_configs()) {
    ModelConfig config;
    c.breaks(config);
    const auto f = config.FirstFailure();
    ASSERT_TRUE(f) << c.member;
    EXPECT_EQ(f->field, c.member);
    EXPECT_EQ(f->kind, fe::FailureKind::bad_input);
    const std::string cli = fs::cli_text(*f);
    const std::string http = fs::failure_text(*f, true);
    if (f->field == "universe") {  // a list from a file or an array: the rule names the asset
      EXPECT_EQ(cli.rfind("universe: asset 'ZQ-1' is listed twice", 0), 0u) << cli;
      EXPECT_EQ(http, cli);
      continue;
    }
    std::string flag = "--" + f->field;
    for (char& ch : flag)
      if (ch == '_') ch = '-';
    EXPECT_NE(arguments.set->get_option_no_throw(flag), nullptr) << flag << " is not an option of model set";
    EXPECT_EQ(cli.rfind("option '" + flag + "'", 0), 0u) << cli;
    EXPECT_EQ(http.rfind("member '" + f->field + "'", 0), 0u) << http;
    EXPECT_EQ(cli.substr(cli.find('\'', 8) + 1), http.substr(http.find('\'', 8) + 1))
        << "the surfaces differ beyond the field's name: " << cli << " | " << http;

    // The member is one PUT /v1/models reads: sending the same value over HTTP fails on
    // the same field (the definition applies members, then the same rule).
    ModelConfig over_http;
    nlohmann::ordered_json body = {{f->field, config.to_json()[f->field]}};
    if (f->field == "half_life") body["half_life"] = -1;
    const auto bad = fs::read_model_definition(body.dump(), over_http);
    ASSERT_TRUE(bad) << body.dump();
    EXPECT_EQ(bad->field, f->field) << bad->message;
  }
}

// Over HTTP a half-life of null or 0 means equal weights (docs/api.md); a positive one
// exponential weights; anything else is refused naming the member.
TEST(FailureText, AHalfLifeOfZeroOverHttpMeansEqualWeights) {
  ModelConfig config;
  ASSERT_FALSE(fs::read_model_definition(R"({"half_life":30})", config));
  EXPECT_EQ(config.fit.weighting, fe::Weighting::ewma);
  EXPECT_EQ(config.fit.half_life, 30);
  ASSERT_FALSE(fs::read_model_definition(R"({"half_life":0})", config));
  EXPECT_EQ(config.fit.weighting, fe::Weighting::equal);
  ASSERT_FALSE(fs::read_model_definition(R"({"half_life":12.5})", config));
  ASSERT_FALSE(fs::read_model_definition(R"({"half_life":null})", config));
  EXPECT_EQ(config.fit.weighting, fe::Weighting::equal);
  const auto bad = fs::read_model_definition(R"({"half_life":-2})", config);
  ASSERT_TRUE(bad);
  EXPECT_EQ(bad->field, "half_life");
  EXPECT_EQ(bad->message, "member 'half_life': exponential weighting needs a half-life above 0 dates");
}

TEST(FailureText, FitOptionsNameTheOptionsOfTheFitCommand) {
  CLI::App app;
  fs::FitArguments arguments;
  CLI::App* fit = fs::add_fit_command(app, arguments);
  const std::vector<std::pair<const char*, void (*)(fe::FitOptions&)>> cases = {
      {"factors", [](fe::FitOptions& o) { o.factors = 0; }},
      {"half_life", [](fe::FitOptions& o) { o.weighting = fe::Weighting::ewma, o.half_life = -2; }},
      {"min_coverage", [](fe::FitOptions& o) { o.min_coverage = 0; }},
      {"tolerance", [](fe::FitOptions& o) { o.tolerance = 1; }},
      {"max_iterations", [](fe::FitOptions& o) { o.max_iterations = 0; }},
  };
  for (const auto& [field, breaks] : cases) {
    fe::FitOptions o;
    breaks(o);
    const auto f = o.FirstFailure();
    ASSERT_TRUE(f) << field;
    EXPECT_EQ(f->field, field);
    std::string error;
    EXPECT_FALSE(o.IsValid(&error));
    EXPECT_EQ(error, fe::describe(*f));  // the engine's own exception text
    const std::string cli = fs::cli_text(*f);
    const std::string flag = cli.substr(8, cli.find('\'', 8) - 8);
    EXPECT_NE(fit->get_option_no_throw(flag), nullptr) << cli;
  }
}

TEST(FailureText, ArgumentsAreNamedByTheirValueAndModelsByTheirRule) {
  const fe::Failure asset = fe::failure(fe::FailureKind::unknown_name, "asset", "NOPE", "unknown asset (no returns stored)");
  EXPECT_EQ(fs::cli_text(asset), "asset 'NOPE': unknown asset (no returns stored)");
  EXPECT_EQ(fs::cli_hint(asset, "m"), "; factorwatch exposures m lists the assets fitted");
  EXPECT_EQ(fs::failure_text(asset, false), "query parameter 'asset' = 'NOPE': unknown asset (no returns stored)");
  const fe::Failure model = fe::failure(fe::FailureKind::unknown_name, "model", "", "no model named 'nope'");
  EXPECT_EQ(fs::cli_text(model), "no model named 'nope'");
  EXPECT_EQ(fs::cli_hint(model, "nope"), " (factorwatch model list shows them)");
  fe::Failure none = fe::failure(fe::FailureKind::not_stored, "", "", "model 'm' has no window yet");
  none.refresh_helps = true;
  EXPECT_EQ(fs::cli_text(none) + fs::cli_hint(none, "m"), "model 'm' has no window yet; run: factorwatch refresh m");
  const fe::Failure portfolio = fe::failure(fe::FailureKind::unknown_name, "portfolio", "", "no portfolio named 'x'");
  EXPECT_EQ(fs::cli_text(portfolio), "PORTFOLIO: no portfolio named 'x'");
  EXPECT_EQ(fs::failure_text(portfolio, true), "member 'portfolio': no portfolio named 'x'");
}

// Weights the risk query cannot measure fail as values naming the set, in the words a
// user reads: no function name of the engine's in front (it used to be cut off by hand).
TEST(WeightsFailure, AnAssetTwiceOrAWeightThatIsNotFiniteIsRejectedByName) {
  const fe::Holdings twice = {{"ZQ-1", 0.5}, {"ZQ-2", 0.2}, {"ZQ-1", 0.3}};
  auto f = fe::weights_failure(twice, "weights");
  ASSERT_TRUE(f);
  EXPECT_EQ(f->kind, fe::FailureKind::rejected);
  EXPECT_EQ(f->field, "weights");
  EXPECT_EQ(f->rule, "asset 'ZQ-1' appears more than once");
  const fe::Holdings infinite = {{"ZQ-1", std::numeric_limits<double>::infinity()}};
  f = fe::weights_failure(infinite, "trade");
  ASSERT_TRUE(f);
  EXPECT_EQ(f->rule, "the weight of asset 'ZQ-1' is not finite");
  EXPECT_FALSE(fe::weights_failure({{"ZQ-1", 1e15}, {"ZQ-2", -1e15}}, "weights"));
}

}  // namespace

// The model field table (storage/model_fields.h) drives the stored JSON, the configuration
// hash and the validation. The stored JSON and the hashes below were written by the
// version before the table (main at 77ec3ac, `model set` then `model show --format json`),
// so a model defined then keeps its hash, its version and its windows: the table must give
// the same bytes. The configurations are our own.
#include <gtest/gtest.h>

#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "factorwatch/engine/fit.h"
#include "factorwatch/storage/model_fields.h"
#include "factorwatch/storage/models.h"

namespace {

using factorwatch::storage::ModelConfig;
namespace fs = factorwatch::storage;
namespace fe = factorwatch::engine;

struct Stored {
  const char* hash;
  const char* json;
};

// `model set plain`; `small --method pca --factors 3 --window 126 --step 20 --first-as-of
// 2025-06-01`; `turned --rotation varimax --kaiser-normalize no --alert-below 0.9
// --tolerance 1e-6 --align-to smoothed --smoothing-half-life 10 --min-shared-assets 30
// --pinned-window 2025-01-02`; `decay --half-life 30 --basis correlation --method
// principal-axis --min-coverage 0.9`.
const std::vector<Stored> kStored = {
    {"dcc32ea98ff3ffef",
     R"({"universe":[],"window":504,"step":1,"method":"ml","factors":5,"basis":"covariance","weighting":"equal","half_life":0.0,"min_coverage":0.8,"first_as_of":"","tolerance":1e-08,"rotation":"none","kaiser_normalize":true,"align_to":"previous","pinned_window":"","smoothing_half_life":20.0,"min_shared_assets":20,"alert_below":0.95,"alert_below_pinned":0.85})"},
    {"63d3cadaa5e46758",
     R"({"universe":[],"window":126,"step":20,"method":"pca","factors":3,"basis":"covariance","weighting":"equal","half_life":0.0,"min_coverage":0.8,"first_as_of":"2025-06-01","tolerance":1e-08,"rotation":"none","kaiser_normalize":true,"align_to":"previous","pinned_window":"","smoothing_half_life":20.0,"min_shared_assets":20,"alert_below":0.95,"alert_below_pinned":0.85})"},
    {"0e36d5760c882b28",
     R"({"universe":[],"window":504,"step":1,"method":"ml","factors":5,"basis":"covariance","weighting":"equal","half_life":0.0,"min_coverage":0.8,"first_as_of":"","tolerance":1e-06,"rotation":"varimax","kaiser_normalize":false,"align_to":"smoothed","pinned_window":"2025-01-02","smoothing_half_life":10.0,"min_shared_assets":30,"alert_below":0.9,"alert_below_pinned":0.85})"},
    {"5468755f1e1eaa14",
     R"({"universe":[],"window":504,"step":1,"method":"principal-axis","factors":5,"basis":"correlation","weighting":"ewma","half_life":30.0,"min_coverage":0.9,"first_as_of":"","tolerance":1e-08,"rotation":"none","kaiser_normalize":true,"align_to":"previous","pinned_window":"","smoothing_half_life":20.0,"min_shared_assets":20,"alert_below":0.95,"alert_below_pinned":0.85})"},
};

// The stored JSON without the members added since those configurations were written
// (appended to the table, at their defaults there).
std::string as_then(const ModelConfig& c, const char* stored) {
  const nlohmann::json then = nlohmann::json::parse(stored);
  nlohmann::ordered_json now = c.to_json();
  for (const fs::ModelField& f : fs::model_fields())
    if (!then.contains(f.member)) {
      EXPECT_TRUE(f.added_after_schema_4) << f.member;
      EXPECT_EQ(now[f.member], f.get(ModelConfig{})) << f.member;
      now.erase(f.member);
    }
  return now.dump();
}

TEST(ModelFields, StoredConfigurationsReadBackToTheSameBytesAndHash) {
  for (const Stored& s : kStored) {
    const ModelConfig c = ModelConfig::from_json(nlohmann::json::parse(s.json));
    EXPECT_EQ(as_then(c, s.json), s.json);
    EXPECT_EQ(c.hash(), s.hash) << s.json;
    EXPECT_FALSE(c.FirstFailure()) << s.json;
  }
  EXPECT_EQ(as_then(ModelConfig{}, kStored[0].json), kStored[0].json);
}

// A configuration stored before schema 5 has none of the later members; it reads with
// their defaults and keeps its hash.
TEST(ModelFields, AConfigurationFromBeforeSchemaFiveKeepsItsHash) {
  nlohmann::json old = nlohmann::json::parse(kStored[1].json);
  int dropped = 0;
  for (const fs::ModelField& f : fs::model_fields())
    if (f.added_after_schema_4) dropped += static_cast<int>(old.erase(f.member));
  EXPECT_EQ(dropped, 9);
  const ModelConfig c = ModelConfig::from_json(old);
  EXPECT_EQ(c.hash(), kStored[1].hash);
  EXPECT_EQ(as_then(c, kStored[1].json), kStored[1].json);
}

TEST(ModelFields, AStoredConfigurationWithAMissingOrWrongMemberIsRefusedByName) {
  nlohmann::json j = nlohmann::json::parse(kStored[0].json);
  j.erase("factors");
  try {
    ModelConfig::from_json(j);
    ADD_FAILURE() << "a configuration without factors was read";
  } catch (const std::runtime_error& e) {
    EXPECT_NE(std::string(e.what()).find("member 'factors' is missing"), std::string::npos) << e.what();
  }
  j = nlohmann::json::parse(kStored[0].json);
  j["method"] = "mle";
  EXPECT_THROW(ModelConfig::from_json(j), std::runtime_error);
  j = nlohmann::json::parse(kStored[0].json);
  j["weighting"] = 3;
  EXPECT_THROW(ModelConfig::from_json(j), std::runtime_error);
}

// One default for k: a model and a one-off fit start from the same options.
TEST(ModelFields, ModelsAndTheEngineShareTheirDefaults) {
  const ModelConfig c;
  const fe::FitOptions o;
  EXPECT_EQ(c.fit.factors, o.factors);
  EXPECT_EQ(c.fit.method, o.method);
  EXPECT_EQ(c.fit.tolerance, o.tolerance);
  EXPECT_EQ(c.fit.min_coverage, o.min_coverage);
  EXPECT_EQ(fs::default_text(*fs::find_model_field("factors")), std::to_string(o.factors));
  EXPECT_EQ(fs::help_text(*fs::find_model_field("window")), "Dates per window (default 504)");
  EXPECT_EQ(fs::help_text(*fs::find_model_field("tolerance")).substr(0, 20), "Where ml and princip");
  EXPECT_NE(fs::help_text(*fs::find_model_field("tolerance")).find("(default 1e-08)"), std::string::npos);
}

// Every member takes back what it gives: set(get(c)) leaves c as it was, for a
// configuration away from every default.
TEST(ModelFields, EveryMemberSetsWhatItGets) {
  const ModelConfig c = ModelConfig::from_json(nlohmann::json::parse(kStored[2].json));
  for (const fs::ModelField& f : fs::model_fields()) {
    ModelConfig copy;
    const auto why = f.set(copy, f.get(c));
    EXPECT_FALSE(why) << f.member << ": " << why.value_or("");
    EXPECT_EQ(f.get(copy), f.get(c)) << f.member;
  }
}

}  // namespace

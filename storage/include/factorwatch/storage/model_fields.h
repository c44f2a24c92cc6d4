// The members of a model configuration, one row each: the one place that names them. The
// stored JSON (its order and its types), the configuration hash, the validation, the
// options of `factorwatch model set` and the members of PUT /v1/models are all read from
// this table; each surface spells a member its own way (the command line as a flag, the
// member with dashes: "--min-coverage"; HTTP as the member itself). Adding an option to
// models is a row here, its rule, and its documentation (DEVELOPERS.md, "Adding a model
// option").
#pragma once

#include <nlohmann/json.hpp>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "factorwatch/engine/failure.h"
#include "factorwatch/storage/models.h"

namespace factorwatch::storage {

// What values a member takes, which decides how each surface reads it.
enum class FieldKind {
  universe,         // asset names; "all" for every stored asset (CLI: a list file or 'all')
  whole_number,     // an integer (HTTP: within +-1e9)
  number,           // a real number
  choice,           // one word of `choices`
  date_or_default,  // yyyy-mm-dd, or the default (CLI: the word `keyword`; HTTP: null); stored "" then
  yes_no,           // CLI yes|no, HTTP and stored true|false
  half_life,        // dates of exponential weights; null: equal weights (CLI: --equal-weights;
                    // a definition sent over HTTP may also say 0)
  follows,          // stored only, set by another member (weighting follows half_life)
};

struct ModelField {
  const char* member;                // JSON member: stored, and sent over HTTP
  FieldKind kind;
  const char* value_name;            // the command line's name for the value ("DATES"); "" for choices
  const char* help;                  // the command line's help; "{default}" stands for the default
  std::vector<std::string> choices;  // choice and yes_no: the words (CLI spelling)
  const char* keyword;               // date_or_default: the command line's word for the default
  // Absent from configurations stored before schema 5, which had the default: such a
  // member enters the configuration hash only when it differs from its default, so an
  // older model keeps its hash, its version and its windows.
  bool added_after_schema_4;
  nlohmann::ordered_json (*get)(const ModelConfig&);
  // Sets the member from a JSON value (stored, sent over HTTP, or a command-line value made
  // JSON); when the value is of the wrong type, not a choice or out of range, changes
  // nothing and says why ("must be a whole number").
  std::optional<std::string> (*set)(ModelConfig&, const nlohmann::json&);
  // The member's rules on a whole configuration (some look at others: factors below the
  // window); the first broken, naming this member.
  std::optional<engine::Failure> (*check)(const ModelConfig&);
};

// In the stored JSON's order.
const std::vector<ModelField>& model_fields();

// The row of a member; nullptr when there is none.
const ModelField* find_model_field(std::string_view member);

// The default of a member as help text shows it: "504", "ml", "1e-08", "yes".
std::string default_text(const ModelField& field);

// The help with its default filled in.
std::string help_text(const ModelField& field);

// field.set as a failure naming the member (and, for a text that is not a date, the text).
std::optional<engine::Failure> set_model_field(const ModelField& field, ModelConfig& config,
                                               const nlohmann::json& value);

// The failure for a member there is no row for (or one a definition does not send),
// listing those it may send.
engine::Failure unknown_member(const std::string& member);

}  // namespace factorwatch::storage

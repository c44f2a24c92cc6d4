// Why a request cannot be answered, as a value every layer returns and every surface
// renders in its own words. The kind alone decides the command line's exit code and the
// HTTP status (one map each, in the surfaces); the field names the input at fault in the
// schema's spelling (snake_case: "min_coverage", "as_of", "asset"), which each surface
// spells its own way ("option '--min-coverage'", "member 'min_coverage'", "query
// parameter 'as_of'"). Nothing downstream edits the text: a surface only puts its
// spelling of the field in front and its own hint behind.
#pragma once

#include <optional>
#include <string>

namespace factorwatch::engine {

enum class FailureKind {
  bad_input,     // malformed or out of range: fix the request
  unknown_name,  // names a model, asset or portfolio that is not stored
  not_stored,    // no such window or comparison is stored (yet)
  not_usable,    // the window's fit failed: there is no model to answer with
  rejected,      // well formed, but it gives no finite answer (weights that overflow)
};

struct Failure {
  FailureKind kind = FailureKind::bad_input;
  std::string field;         // the input at fault; "" when none (the model alone)
  std::string value;         // what was given, shown after the field; "" when the rule says it
  bool quote_value = true;   // text is shown quoted ('x'), numbers are not
  std::string rule;          // what is wrong, without the field's name
  bool refresh_helps = false;  // a refresh would store what is missing
};

// The pieces of a Failure, for the common cases.
Failure failure(FailureKind kind, std::string field, std::string value, std::string rule);
// A number given for `field` breaks `rule` (shown unquoted).
Failure bad_number(std::string field, std::string value, std::string rule);

// "SUBJECT = 'value': rule", "SUBJECT: rule" without a value, or the rule alone when the
// subject is empty. The subject is the surface's spelling of the field.
std::string describe(const Failure& failure, const std::string& subject);

// The field as the engine's own messages name it: "option 'min_coverage'".
std::string describe(const Failure& failure);

}  // namespace factorwatch::engine

// The dates of a request, in the vocabulary every query shares: a surface reads the text
// it was given (a command-line option, a query parameter, a body member) into an
// engine::Date once, here, and asks its query with dates. One rule and one message for a
// malformed date on every surface: "<field> = '<text>': not a date in the form yyyy-mm-dd".
#pragma once

#include <optional>
#include <string>

#include "factorwatch/engine/date.h"
#include "factorwatch/engine/failure.h"

namespace factorwatch::pipeline {

// The outcome of a lookup: nullopt when answered, else why not (engine/failure.h).
using QueryFailure = std::optional<engine::Failure>;

// The model and an optional date range (none = open end).
struct RangeQuery {
  std::string model;
  std::optional<engine::Date> from, to;
};

// A date as a request gives it: "" is no date; other text that is not a date yyyy-mm-dd
// is a bad_input failure naming the field and the text.
QueryFailure read_date(const std::string& field, const std::string& text, std::optional<engine::Date>& date);

// A range whose end is before its start: a bad_input failure naming "to".
QueryFailure reversed_range(const RangeQuery& query);

}  // namespace factorwatch::pipeline

#include "factorwatch/pipeline/request_dates.h"

namespace factorwatch::pipeline {

QueryFailure read_date(const std::string& field, const std::string& text, std::optional<engine::Date>& date) {
  date.reset();
  if (text.empty()) return std::nullopt;
  date = engine::Date::from_iso(text);
  if (date) return std::nullopt;
  return engine::failure(engine::FailureKind::bad_input, field, text, "not a date in the form yyyy-mm-dd");
}

QueryFailure reversed_range(const RangeQuery& q) {
  if (!q.from || !q.to || !(*q.to < *q.from)) return std::nullopt;
  return engine::failure(engine::FailureKind::bad_input, "to", q.to->iso(), "before the start of the range, " + q.from->iso());
}

}  // namespace factorwatch::pipeline

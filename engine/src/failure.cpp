#include "factorwatch/engine/failure.h"

#include <utility>

namespace factorwatch::engine {

Failure failure(FailureKind kind, std::string field, std::string value, std::string rule) {
  Failure f;
  f.kind = kind;
  f.field = std::move(field);
  f.value = std::move(value);
  f.rule = std::move(rule);
  return f;
}

Failure bad_number(std::string field, std::string value, std::string rule) {
  Failure f = failure(FailureKind::bad_input, std::move(field), std::move(value), std::move(rule));
  f.quote_value = false;
  return f;
}

std::string describe(const Failure& f, const std::string& subject) {
  if (subject.empty()) return f.rule;
  std::string text = subject;
  if (!f.value.empty()) text += f.quote_value ? " = '" + f.value + "'" : " = " + f.value;
  return text + ": " + f.rule;
}

std::string describe(const Failure& f) { return describe(f, f.field.empty() ? "" : "option '" + f.field + "'"); }

}  // namespace factorwatch::engine

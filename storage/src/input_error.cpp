#include "factorwatch/storage/input_error.h"

#include <utility>

namespace factorwatch::storage {
namespace {

std::string compose(const std::string& path, std::size_t line, const std::string& field,
                    const std::string& problem) {
  std::string message = path;
  if (line > 0) message += ":" + std::to_string(line);
  message += ": ";
  if (!field.empty()) message += "field '" + field + "': ";
  return message + problem;
}

}  // namespace

InputError::InputError(std::string path, std::size_t line, std::string field, std::string problem)
    : std::runtime_error(compose(path, line, field, problem)),
      path_(std::move(path)),
      line_(line),
      field_(std::move(field)),
      problem_(std::move(problem)) {}

}  // namespace factorwatch::storage

// The one exception the file readers throw: a problem in the input file itself.
//
// what() reads "FILE:LINE: field 'NAME': what is wrong" so that a user can go straight to
// the cell; LINE is 1-based and counts every physical line (comments and blank lines too),
// NAME is the column header. Parts that do not apply (a file that cannot be opened has no
// line; a malformed row may have no single field) are left out of the message.
#pragma once

#include <cstddef>
#include <stdexcept>
#include <string>

namespace factorwatch::storage {

class InputError : public std::runtime_error {
 public:
  InputError(std::string path, std::size_t line, std::string field, std::string problem);

  const std::string& path() const { return path_; }
  std::size_t line() const { return line_; }  // 0 when the problem is not on one line
  const std::string& field() const { return field_; }  // empty when not about one column
  const std::string& problem() const { return problem_; }

 private:
  std::string path_;
  std::size_t line_;
  std::string field_;
  std::string problem_;
};

}  // namespace factorwatch::storage

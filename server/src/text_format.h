// Small pieces of CSV and number output shared by the CLI and the daemon.
#pragma once

#include <string>

namespace factorwatch::server {

// A CSV field, quoted when it holds a comma, quote or line break (RFC 4180).
std::string csv_field(const std::string& text);

// Numbers for CSV and JSON consumers: the shortest decimal text that reads back as the
// same double (std::to_chars), so nothing is lost between the database and a script.
std::string exact_number(double x);
void append_exact_number(std::string& out, double x);

// "# caution: ...\n", the first line of every CSV that carries risk numbers.
std::string csv_caution_line();

}  // namespace factorwatch::server

// Small pieces of CSV and number output shared by the CLI and the daemon.
#pragma once

#include <nlohmann/json.hpp>
#include <string>
#include <vector>

namespace factorwatch::server {

// A CSV field, quoted when it holds a comma, quote or line break (RFC 4180).
std::string csv_field(const std::string& text);

// Numbers for CSV and JSON consumers: the shortest decimal text that reads back as the
// same double (std::to_chars), so nothing is lost between the database and a script.
std::string exact_number(double x);
void append_exact_number(std::string& out, double x);

// A number that may be missing (NaN: not aligned, not compared, a vanished factor): the
// exact number, else an empty CSV cell / a JSON null.
std::string csv_number(double x);
nlohmann::ordered_json json_number(double x);

// A name (an asset, a reason naming one) as a terminal table shows it: control characters,
// NUL and invisible formatting characters escaped as \xNN or \uNNNN
// (storage::printable_text). Names read from files follow the identifier rule and come
// out unchanged; a name stored before the rule (an older database) cannot move the
// cursor, recolour the terminal, or print like another. CSV and JSON keep the exact bytes.
std::string table_text(const std::string& text);

// "A, B,C" into names: comma-separated, spaces around names ignored, empty items dropped
// (--assets on the command line, ?assets= over HTTP).
std::vector<std::string> split_list(const std::string& text);

// "# caution: ...\n", the first line of every CSV that carries risk numbers.
std::string csv_caution_line();

}  // namespace factorwatch::server

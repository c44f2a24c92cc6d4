// `factorwatch model set NAME [options]`, `model show NAME`, `model list`,
// `model delete NAME`, `model prune NAME`, `model rename NAME NEW_NAME`.
//
// `set` on an existing model changes only the options given; any change starts a new
// version (stored windows keep the version they were fitted with).
#pragma once

#include <CLI/CLI.hpp>
#include <map>
#include <string>

#include "cli_common.h"

namespace factorwatch::server {

// The value of one `model set` option, bound by CLI11 in the type the member's kind takes
// (storage/model_fields.h): a whole number, a number or a word.
struct ModelOptionValue {
  int whole = 0;
  double number = 0;
  std::string text;
  CLI::Option* option = nullptr;  // given when option->count() > 0
};

struct ModelArguments {
  std::string name;
  std::string new_name;  // model rename
  // One entry per member of the field table that the command line sets, by member name
  // (a map: CLI11 keeps the addresses of the values).
  std::map<std::string, ModelOptionValue> options;
  bool equal_weights = false;  // --equal-weights: the half-life's default, said as a flag
  std::string format = "table";
  CLI::App *set = nullptr, *show = nullptr, *list = nullptr, *remove = nullptr, *prune = nullptr, *rename = nullptr;
};

CLI::App* add_model_command(CLI::App& app, ModelArguments& arguments);
int run_model_command(const ModelArguments& arguments, const GlobalArguments& global);

}  // namespace factorwatch::server

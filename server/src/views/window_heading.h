// What every one-window rendering starts with, so the CLI and the daemon describe a
// window the same way: the JSON members caution, model, version, as_of, first_date,
// and the CSV comment line "# model NAME version N, window FIRST .. AS_OF[; note: NOTE]".
#pragma once

#include <nlohmann/json.hpp>
#include <string>

#include "factorwatch/pipeline/window_query.h"

namespace factorwatch::server {

nlohmann::ordered_json window_json_heading(const pipeline::SelectedWindow& s);

// Without the line end, so that each view can add its own detail.
std::string window_csv_heading(const pipeline::SelectedWindow& s);

}  // namespace factorwatch::server

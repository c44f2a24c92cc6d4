// What every one-window rendering starts with, so the CLI and the daemon describe a
// window the same way: the JSON members caution, model, version, as_of, first_date,
// and the CSV comment line "# model NAME version N, window FIRST .. AS_OF".
#pragma once

#include <nlohmann/json.hpp>
#include <string>

#include "window_query.h"

namespace factorwatch::server {

nlohmann::ordered_json window_json_heading(const SelectedWindow& s);

// Without the line end, so that each view can add its own detail.
std::string window_csv_heading(const SelectedWindow& s);

// The basis the factors are served in: "rotation varimax, aligned onto 2025-12-30
// (previous)" and the like.
std::string factor_basis_text(const SelectedWindow& s);

}  // namespace factorwatch::server

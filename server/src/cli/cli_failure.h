// A failure from the layers below, on the command line: the kind turned into the exit
// code (the one map), the field spelled as the user typed it, and one line on stderr.
#pragma once

#include <string>

#include "factorwatch/engine/failure.h"

namespace factorwatch::server {

// 2 for what the user can fix in the command (bad input, a name that is not stored, weights
// that cannot be measured); 1 when the job ran and found nothing usable (no window or
// comparison stored yet, a failed fit).
int exit_code(engine::FailureKind kind);

// The command line's option for a field: "--" and the field with dashes ("min_coverage"
// -> "--min-coverage"); `model set` registers its options by this rule.
std::string cli_flag(const std::string& field);

// The failure in the command line's words: an option by its flag ("option '--min-coverage'
// = 0: must be in (0, 1]"), an argument by its value ("asset 'ZQ-1': unknown asset ..."),
// a stored portfolio as the PORTFOLIO argument, the model and the universe list by their
// rules alone (those name what they are about).
std::string cli_text(const engine::Failure& failure);

// What to run next, for a failure about `model`: the listing that shows the names, or the
// refresh that stores what is missing. "" when nothing helps.
std::string cli_hint(const engine::Failure& failure, const std::string& model);

// Prints "factorwatch COMMAND: TEXT HINT" and returns the exit code.
int report_failure(const char* command, const engine::Failure& failure, const std::string& model);

}  // namespace factorwatch::server

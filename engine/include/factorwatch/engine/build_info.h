// What built the numbers: the program's version, the Eigen and Spectra versions compiled
// in, and the build's notable flags (compiler, build type, optimisation, vector
// instructions, threads, sanitizers). Stored with every fitted window, so that a figure
// can be traced to the code and build that produced it.
#pragma once

#include <string>

namespace factorwatch::engine {

struct BuildInfo {
  std::string program_version;  // e.g. "0.1.0"
  std::string eigen_version;    // e.g. "3.4.0"
  std::string spectra_version;  // e.g. "1.0.1"
  std::string build_flags;      // e.g. "GNU 12.2.0, Release, -O3 -DNDEBUG -march=native, OpenMP"
};

// This build's (factorwatch_engine, compiled with the definitions CMake gives it).
const BuildInfo& build_info();

}  // namespace factorwatch::engine

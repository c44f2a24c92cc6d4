#include "factorwatch/engine/build_info.h"

#include <Eigen/Core>
#include <Spectra/Util/Version.h>

#ifndef FACTORWATCH_VERSION
#error "FACTORWATCH_VERSION comes from engine/CMakeLists.txt"
#endif
#ifndef FACTORWATCH_BUILD_FLAGS
#error "FACTORWATCH_BUILD_FLAGS comes from engine/CMakeLists.txt"
#endif

namespace factorwatch::engine {
namespace {

std::string dotted(int major, int minor, int patch) {
  return std::to_string(major) + "." + std::to_string(minor) + "." + std::to_string(patch);
}

}  // namespace

const BuildInfo& build_info() {
  // The versions of the headers this file was compiled against: the whole engine is one
  // build, so they are the engine's.
  static const BuildInfo info{FACTORWATCH_VERSION,
                              dotted(EIGEN_WORLD_VERSION, EIGEN_MAJOR_VERSION, EIGEN_MINOR_VERSION),
                              dotted(SPECTRA_MAJOR_VERSION, SPECTRA_MINOR_VERSION, SPECTRA_PATCH_VERSION),
                              FACTORWATCH_BUILD_FLAGS};
  return info;
}

}  // namespace factorwatch::engine

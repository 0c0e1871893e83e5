#pragma once
// GDAL's messages (and PROJ's, which GDAL relays for its spatial
// references) caught while one of these lives, instead of printed on
// stderr as "ERROR 1: ...", so that levelhead's own message can quote them.

#include <cpl_error.h>
#include <fmt/format.h>

#include <string>
#include <vector>

namespace levelhead::util {

class GdalMessages {
 public:
  GdalMessages() { CPLPushErrorHandlerEx(&keep, this); }
  ~GdalMessages() { CPLPopErrorHandler(); }
  GdalMessages(const GdalMessages&) = delete;
  GdalMessages& operator=(const GdalMessages&) = delete;

  // " (GDAL: proj_create: crs not found)", or empty when GDAL said nothing.
  std::string quoted() const {
    return lines_.empty() ? std::string() : fmt::format(" (GDAL: {})", fmt::join(lines_, "; "));
  }

 private:
  static void CPL_STDCALL keep(CPLErr, CPLErrorNum, const char* line) {
    auto* self = static_cast<GdalMessages*>(CPLGetErrorHandlerUserData());
    if (self && line) self->lines_.emplace_back(line);
  }
  std::vector<std::string> lines_;
};

}  // namespace levelhead::util

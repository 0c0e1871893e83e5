#pragma once
// What every fuzz harness shares.
//
// The contract a harness checks: for any bytes, a reader either returns data
// that passes the harness's checks or throws one of levelhead's typed errors
// (levelhead/core/errors.hpp), which the CLI turns into a message. Any other
// exception escapes the harness (the fuzzer reports it as a crash), and a
// broken check aborts with a line saying which.

#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <string_view>

#include "levelhead/core/errors.hpp"

namespace levelhead::fuzz {

// A broken check: says which and aborts, so the fuzzer keeps the input.
inline void require(bool holds, const char* check) {
  if (holds) return;
  std::fprintf(stderr, "fuzz check failed: %s\n", check);
  std::abort();
}

// Runs `body`; levelhead's typed errors are an accepted answer to bad input,
// except an InternalCheckError (levelhead's own result was not finite).
template <typename Body>
void accept_typed_errors(Body&& body) {
  try {
    body();
  } catch (const levelhead::InternalCheckError& e) {
    std::fprintf(stderr, "%s\n", e.what());
    require(false, "no internal check fails");
  } catch (const levelhead::Error&) {
  }
}

inline void require_finite(double value, const char* what) { require(std::isfinite(value), what); }

inline std::string_view as_text(const unsigned char* data, std::size_t size) {
  return {reinterpret_cast<const char*>(data), size};
}

}  // namespace levelhead::fuzz

#pragma once
// Owning handles for PROJ objects, shared by the PROJ-based sources, and
// PROJ's own messages: kept, never printed, and quoted in levelhead's.

#include <proj.h>

#include <memory>
#include <string>

namespace levelhead::proj {

struct PjDeleter {
  void operator()(PJ* p) const { proj_destroy(p); }
};
using PjPtr = std::unique_ptr<PJ, PjDeleter>;

struct ContextDeleter {
  void operator()(PJ_CONTEXT* c) const { proj_context_destroy(c); }
};
using ContextPtr = std::unique_ptr<PJ_CONTEXT, ContextDeleter>;

// The last line PROJ logged on this thread (each thread works with its own
// contexts, and PROJ calls the log function on the calling thread).
inline std::string& last_log_line() {
  thread_local std::string line;
  return line;
}

// A context whose error lines go to last_log_line() instead of stderr.
inline ContextPtr make_context() {
  ContextPtr ctx(proj_context_create());
  proj_log_level(ctx.get(), PJ_LOG_ERROR);
  proj_log_func(ctx.get(), nullptr,
                [](void*, int, const char* line) { last_log_line() = line ? line : ""; });
  last_log_line().clear();
  return ctx;
}

// Why PROJ's last call on `ctx` failed, in PROJ's words: its log line (e.g.
// "proj_create: crs not found"), else its error code's text.
inline std::string message(PJ_CONTEXT* ctx) {
  std::string line = last_log_line();
  last_log_line().clear();
  if (!line.empty()) return line;
  const int code = proj_context_errno(ctx);
  const char* text = code ? proj_context_errno_string(ctx, code) : nullptr;
  return text ? text : "no reason given by PROJ";
}

}  // namespace levelhead::proj

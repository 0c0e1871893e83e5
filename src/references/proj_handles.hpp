#pragma once
// Owning handles for PROJ objects, shared by the PROJ-based sources.

#include <proj.h>

#include <memory>

namespace levelhead::proj {

struct PjDeleter {
  void operator()(PJ* p) const { proj_destroy(p); }
};
using PjPtr = std::unique_ptr<PJ, PjDeleter>;

struct ContextDeleter {
  void operator()(PJ_CONTEXT* c) const { proj_context_destroy(c); }
};
using ContextPtr = std::unique_ptr<PJ_CONTEXT, ContextDeleter>;

}  // namespace levelhead::proj

#pragma once
// Large inputs run with glibc's allocator asking the kernel for transparent
// huge pages (the tunable glibc.malloc.hugetlb=1, glibc 2.35 and later).
//
// In:  the program's arguments, before anything else runs.
// Out: returns when the process should go on as it is; otherwise the
//      process is replaced by the same program with the tunable set, and
//      that run restores the environment it was given before doing
//      anything else. Set LEVELHEAD_LARGE_PAGES=0 to never restart.
// Errors: none; if the restart cannot be made, the run goes on as it is.

namespace levelhead::cli {

// The glibc tunables the restart sets: huge pages, and freed memory kept for
// reuse rather than handed back and faulted in again (every block comes
// from the heap, none from its own mapping, and the heap is not trimmed
// below 4 GB). One arena for all threads: a table read on another thread
// would otherwise fill a second heap of fresh pages that the main thread
// never reuses (the 1e6 national network spent 1.0 s of system time
// instead of 0.2 s). Benchmarks set the same for their child runs.
inline constexpr const char* large_input_malloc_tunables =
    "glibc.malloc.hugetlb=1:glibc.malloc.mmap_max=0:glibc.malloc.trim_threshold=4294967296:"
    "glibc.malloc.arena_max=1";

void restart_with_large_pages_for_large_inputs(int argc, char** argv);

}  // namespace levelhead::cli

// Included by `src/main.rs` and `benches/pipeline.rs` (not a module of the library, which has no
// unsafe code): the command's allocator parameters, so that the benchmarks run whole jobs as the
// command runs them.

/// The field solver allocates and frees buffers of a few MB per solution (tens of them in a
/// run). glibc's default gives each back to the system (by `munmap`, or by trimming the heap
/// above 128 kB), so every solution's buffers are page-faulted and zeroed afresh: 0.4–0.7 s of
/// system time in `demo` (docs/architecture.md, "Performance"). Kept up to 32 MB, and in one
/// arena rather than one per thread (which keeps the peak below the default's), they are
/// reused instead. The library leaves its host's allocator alone. Call it before any thread
/// starts.
fn keep_freed_memory() {
    #[cfg(all(target_os = "linux", target_env = "gnu"))]
    // SAFETY: mallopt only sets allocator parameters; it is called before any thread starts.
    unsafe {
        const KEEP: libc::c_int = 32 << 20;
        libc::mallopt(libc::M_ARENA_MAX, 1);
        libc::mallopt(libc::M_MMAP_THRESHOLD, KEEP);
        libc::mallopt(libc::M_TRIM_THRESHOLD, KEEP);
    }
}

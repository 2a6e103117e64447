//! The `ulpgauge` command.

fn main() {
    keep_large_buffers();
    ulpgauge::guard::adopt_orphans();
    let code = ulpgauge::cli::run();
    // Whatever a kernel detached from its worker was adopted by us; it ends with us.
    ulpgauge::guard::reap_orphans();
    std::process::exit(code);
}

/// Streamed sweeps allocate and free buffers of a few hundred KiB per batch; glibc would map
/// and unmap each one (a page fault per 4 KiB every time). Keeping them on the heap instead
/// costs no memory the sweep does not already use.
fn keep_large_buffers() {
    #[cfg(all(target_os = "linux", target_env = "gnu"))]
    // SAFETY: mallopt only tunes the allocator; called before any other thread exists.
    unsafe {
        libc::mallopt(libc::M_MMAP_THRESHOLD, 32 << 20);
        libc::mallopt(libc::M_TRIM_THRESHOLD, 64 << 20);
    }
}

//! Gives the memory a finished stage freed back to the system, so that a large run's peak
//! resident memory is what its stages hold, not what they once held.
//!
//! glibc's allocator keeps freed pages in the arena of the thread that freed them for later
//! reuse. Between the stages of a million-object run (comparison, the other-floor slice, the
//! drivers, the outputs) tens of megabytes freed by one stage's worker threads stay resident
//! while the next stage allocates afresh elsewhere: measured, the 10⁶-object run's peak was
//! ≈ 20 MB higher without [`release_freed`] (DEVELOPERS.md, "The end of a large run").
//! Elsewhere (musl, macOS, Windows) the call does nothing: those allocators have no such entry
//! point and return large blocks themselves.
//!
//! ```
//! let big = vec![0u8; 1 << 24];
//! drop(big);
//! dwarfbound::heap::release_freed();
//! ```

/// Asks the allocator to return every free page of every arena to the system. Call it between
/// stages, when no other thread is allocating: glibc locks each arena in turn while it walks
/// them (a few milliseconds).
#[cfg(all(target_os = "linux", target_env = "gnu"))]
#[allow(unsafe_code)]
pub fn release_freed() {
    // SAFETY: `malloc_trim` takes no pointer and touches only the allocator's own free lists,
    // under the allocator's locks; any argument is valid (0: keep no spare room at the top).
    unsafe {
        libc::malloc_trim(0);
    }
}

/// Does nothing off glibc (see the module text).
#[cfg(not(all(target_os = "linux", target_env = "gnu")))]
pub fn release_freed() {}

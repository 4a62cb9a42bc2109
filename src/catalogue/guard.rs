//! A fence around the decoding libraries: a panic inside one becomes an error, silently.
//!
//! The Parquet, FITS and VOTable decoders are dependencies that trust their input; a hostile
//! file can make them panic. [`quietly`] runs a decoder under `catch_unwind` with the panic
//! message and backtrace suppressed, so the user sees the one-line exit-2 message that names
//! the file instead of a panic report that reads like a bug in dwarfbound.
//!
//! ```
//! use dwarfbound::catalogue::guard::quietly;
//! assert_eq!(quietly(|| 2 + 2), Ok(4));
//! assert!(quietly(|| -> i32 { panic!("decoder bug") }).is_err()); // nothing printed
//! ```
//!
//! The suppression is process-wide while any guarded call runs (a count, not a thread-local
//! flag), because polars decodes on its own worker threads and a panic there is reported by
//! the hook on that thread. Outside guarded calls the previous hook runs unchanged.

use std::panic::{catch_unwind, AssertUnwindSafe};
use std::sync::atomic::{AtomicUsize, Ordering};
use std::sync::Once;

/// Number of guarded calls running now; the hook is silent while it is above zero.
static QUIET: AtomicUsize = AtomicUsize::new(0);
static INSTALL: Once = Once::new();

/// Marker returned when the guarded call panicked (its message is deliberately not kept:
/// it describes the library's internals, not the user's file).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Panicked;

/// Runs `f`, turning a panic into `Err(Panicked)` without printing anything.
pub fn quietly<T>(f: impl FnOnce() -> T) -> Result<T, Panicked> {
    INSTALL.call_once(|| {
        let previous = std::panic::take_hook();
        std::panic::set_hook(Box::new(move |info| {
            if QUIET.load(Ordering::SeqCst) == 0 {
                previous(info);
            }
        }));
    });
    QUIET.fetch_add(1, Ordering::SeqCst);
    let outcome = catch_unwind(AssertUnwindSafe(f));
    QUIET.fetch_sub(1, Ordering::SeqCst);
    outcome.map_err(|_| Panicked)
}

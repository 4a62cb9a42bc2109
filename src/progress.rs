//! Progress bars for the long stages (reading a catalogue, confronting, writing outputs), drawn
//! on stderr only when it is a terminal, so that they never reach an output file, a pipe or a
//! test's captured output.
//!
//! ```
//! let bar = dwarfbound::progress::bar(1000, "writing objects.csv", false);
//! bar.inc(10);
//! bar.finish_and_clear();
//! ```

use std::io::IsTerminal;

/// A bar of `len` steps labelled `msg`; hidden unless stderr is a terminal. `bytes` shows the
/// counts as sizes (reading a file).
pub fn bar(len: u64, msg: &'static str, bytes: bool) -> indicatif::ProgressBar {
    if !std::io::stderr().is_terminal() {
        return indicatif::ProgressBar::hidden();
    }
    let pb = indicatif::ProgressBar::new(len);
    let template = if bytes {
        "{msg:>22} [{bar:40}] {bytes}/{total_bytes} ({elapsed}, eta {eta})"
    } else {
        "{msg:>22} [{bar:40}] {pos}/{len} ({elapsed}, eta {eta})"
    };
    pb.set_style(
        indicatif::ProgressStyle::with_template(template)
            .unwrap_or_else(|_| indicatif::ProgressStyle::default_bar()),
    );
    pb.set_message(msg);
    pb
}

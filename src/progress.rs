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

/// A bar over the named steps of a stage that has no natural count (confronting: the likelihood
/// over the grid, the τ = 0 slice, the drivers, …): it shows the step under way and ticks on its
/// own, so that a step of many seconds still shows the elapsed time. Hidden unless stderr is a
/// terminal. Call [`Steps::step`] as each step starts and [`Steps::finish`] at the end.
pub struct Steps {
    bar: indicatif::ProgressBar,
}

impl Steps {
    /// A bar of `len` steps labelled `msg`.
    pub fn new(len: u64, msg: &'static str) -> Steps {
        if !std::io::stderr().is_terminal() {
            return Steps {
                bar: indicatif::ProgressBar::hidden(),
            };
        }
        let bar = indicatif::ProgressBar::new(len);
        bar.set_style(
            indicatif::ProgressStyle::with_template(
                "{prefix:>22} [{bar:40}] {pos}/{len} {msg} ({elapsed})",
            )
            .unwrap_or_else(|_| indicatif::ProgressStyle::default_bar()),
        );
        bar.set_prefix(msg);
        bar.enable_steady_tick(std::time::Duration::from_millis(250));
        Steps { bar }
    }

    /// Marks the previous step done and names the one starting now.
    pub fn step(&self, what: &'static str) {
        if self.bar.message().is_empty() {
            self.bar.set_position(0);
        } else {
            self.bar.inc(1);
        }
        self.bar.set_message(what);
    }

    /// Removes the bar.
    pub fn finish(&self) {
        self.bar.finish_and_clear();
    }
}

impl Drop for Steps {
    /// An early return (an error) clears the bar too, so that the error line stands alone.
    fn drop(&mut self) {
        self.bar.finish_and_clear();
    }
}

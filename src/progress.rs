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
    timing: Laps,
}

/// With `DWARFBOUND_TIMINGS` set, the wall and CPU time of each named step of a stage, printed
/// to stderr as the step ends (for the developers' stage tables, DEVELOPERS.md); nothing
/// otherwise. [`Steps`] keeps one beside its bar; a stage without a bar (writing the outputs)
/// uses one alone.
pub struct Laps(Option<std::sync::Mutex<(&'static str, std::time::Instant, f64)>>);

impl Laps {
    /// Starts timing the stage `msg` (a line with the process's CPU seconds so far).
    pub fn new(msg: &str) -> Laps {
        Laps(std::env::var_os("DWARFBOUND_TIMINGS").map(|_| {
            eprintln!("timing: {msg}: start at {:.2} CPU-s", process_cpu_s());
            std::sync::Mutex::new(("", std::time::Instant::now(), process_cpu_s()))
        }))
    }

    /// Prints the step that ends now (if one was named) and starts `next`.
    pub fn lap(&self, next: &'static str) {
        if let Some(Ok(mut t)) = self.0.as_ref().map(|t| t.lock()) {
            let cpu = process_cpu_s();
            if !t.0.is_empty() {
                eprintln!(
                    "timing: {:<28} {:7.3} s wall {:7.3} CPU-s",
                    t.0,
                    t.1.elapsed().as_secs_f64(),
                    cpu - t.2
                );
            }
            *t = (next, std::time::Instant::now(), cpu);
        }
    }
}

/// CPU seconds (user + system, all threads) of this process so far, from `/proc/self/stat`
/// (Linux; NaN elsewhere). Clock ticks assumed 100 per second, the Linux default.
pub fn process_cpu_s() -> f64 {
    std::fs::read_to_string("/proc/self/stat")
        .ok()
        .and_then(|s| {
            // Fields after the command name (which may hold spaces) start at the last ')'.
            let rest = &s[s.rfind(')')? + 2..];
            let f: Vec<&str> = rest.split_whitespace().collect();
            let utime: f64 = f.get(11)?.parse().ok()?;
            let stime: f64 = f.get(12)?.parse().ok()?;
            Some((utime + stime) / 100.0)
        })
        .unwrap_or(f64::NAN)
}

impl Steps {
    /// A bar of `len` steps labelled `msg`.
    pub fn new(len: u64, msg: &'static str) -> Steps {
        let timing = Laps::new(msg);
        if !std::io::stderr().is_terminal() {
            return Steps {
                bar: indicatif::ProgressBar::hidden(),
                timing,
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
        Steps { bar, timing }
    }

    /// Marks the previous step done and names the one starting now.
    pub fn step(&self, what: &'static str) {
        self.timing.lap(what);
        if self.bar.message().is_empty() {
            self.bar.set_position(0);
        } else {
            self.bar.inc(1);
        }
        self.bar.set_message(what);
    }

    /// Removes the bar.
    pub fn finish(&self) {
        self.timing.lap("");
        self.bar.finish_and_clear();
    }
}

impl Drop for Steps {
    /// An early return (an error) clears the bar too, so that the error line stands alone.
    fn drop(&mut self) {
        self.bar.finish_and_clear();
    }
}

//! Atomic, deterministic file output shared by every stage that writes files.
//!
//! A nightly job can be killed at any moment; readers must then see either the old file or the
//! new one, never half of one. Every output goes through [`write_atomic`]: the bytes land in a
//! temporary file in the same folder, are flushed to disk, and the file is renamed into place.
//!
//! ```
//! let dir = tempfile::tempdir().unwrap();
//! let path = dir.path().join("a.txt");
//! dwarfbound::output::write_atomic(&path, b"hello\n").unwrap();
//! assert_eq!(std::fs::read(&path).unwrap(), b"hello\n");
//! ```

use std::io::Write;
use std::path::{Path, PathBuf};

/// A failure to write an output file, with the path that failed.
#[derive(Debug, thiserror::Error)]
#[error("cannot write {path}: {source}")]
pub struct OutputError {
    /// The file or folder that could not be written.
    pub path: PathBuf,
    /// The underlying I/O error.
    #[source]
    pub source: std::io::Error,
}

impl OutputError {
    /// Wraps an I/O error with the path it concerns.
    pub fn new(path: impl Into<PathBuf>, source: std::io::Error) -> Self {
        Self {
            path: path.into(),
            source,
        }
    }
}

/// Writes `bytes` to `path` atomically (temporary file in the same folder, fsync, rename).
/// Creates the parent folder if needed.
pub fn write_atomic(path: &Path, bytes: &[u8]) -> Result<(), OutputError> {
    let mut file = AtomicFile::create(path)?;
    file.write_all(bytes)
        .map_err(|e| OutputError::new(path, e))?;
    file.commit()
}

/// A file written atomically in pieces, for outputs too large to hold in memory (`objects.csv`
/// of a million objects): the writes go to a buffered temporary file in the same folder, and
/// [`AtomicFile::commit`] flushes it to disk and renames it into place, as [`write_atomic`]
/// does. Dropped without a commit, the temporary file is removed and the old file stays.
///
/// ```
/// use std::io::Write;
/// let dir = tempfile::tempdir().unwrap();
/// let path = dir.path().join("big.csv");
/// let mut f = dwarfbound::output::AtomicFile::create(&path).unwrap();
/// for k in 0..3 {
///     writeln!(f, "{k}").unwrap();
/// }
/// assert!(!path.exists());
/// f.commit().unwrap();
/// assert_eq!(std::fs::read_to_string(&path).unwrap(), "0\n1\n2\n");
/// ```
pub struct AtomicFile {
    path: PathBuf,
    tmp: PathBuf,
    file: Option<std::io::BufWriter<std::fs::File>>,
}

impl AtomicFile {
    /// Creates the temporary file beside `path` (and the parent folder if needed).
    pub fn create(path: &Path) -> Result<Self, OutputError> {
        let dir = match path.parent() {
            Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
            _ => PathBuf::from("."),
        };
        std::fs::create_dir_all(&dir).map_err(|e| OutputError::new(&dir, e))?;
        // A temporary name of our own in the same folder (so the rename is atomic), created
        // with the default permissions: the user's umask applies, as for any other file.
        static COUNTER: std::sync::atomic::AtomicU64 = std::sync::atomic::AtomicU64::new(0);
        let name = path
            .file_name()
            .map(|n| n.to_string_lossy().to_string())
            .unwrap_or_else(|| "output".into());
        loop {
            let n = COUNTER.fetch_add(1, std::sync::atomic::Ordering::Relaxed);
            let tmp = dir.join(format!(".{name}.{}.{n}.tmp", std::process::id()));
            match std::fs::OpenOptions::new()
                .write(true)
                .create_new(true)
                .open(&tmp)
            {
                Ok(f) => {
                    return Ok(Self {
                        path: path.to_path_buf(),
                        tmp,
                        file: Some(std::io::BufWriter::with_capacity(1 << 16, f)),
                    })
                }
                Err(e) if e.kind() == std::io::ErrorKind::AlreadyExists => continue,
                Err(e) => return Err(OutputError::new(&dir, e)),
            }
        }
    }

    /// The final path.
    pub fn path(&self) -> &Path {
        &self.path
    }

    /// Everything written so far, read back from the temporary file (a nightly run compares
    /// its objects with the previous run's before the files are published).
    pub fn read_back(&mut self) -> Result<Vec<u8>, OutputError> {
        if let Some(f) = self.file.as_mut() {
            f.flush().map_err(|e| OutputError::new(&self.path, e))?;
        }
        std::fs::read(&self.tmp).map_err(|e| OutputError::new(&self.path, e))
    }

    /// Flushes, syncs and renames the file into place.
    pub fn commit(mut self) -> Result<(), OutputError> {
        let Some(w) = self.file.take() else {
            return Ok(());
        };
        let written = w
            .into_inner()
            .map_err(|e| e.into_error())
            .and_then(|f| f.sync_all())
            .and_then(|_| std::fs::rename(&self.tmp, &self.path));
        if let Err(e) = written {
            let _ = std::fs::remove_file(&self.tmp);
            return Err(OutputError::new(&self.path, e));
        }
        Ok(())
    }
}

impl Write for AtomicFile {
    fn write(&mut self, buf: &[u8]) -> std::io::Result<usize> {
        match self.file.as_mut() {
            Some(f) => f.write(buf),
            None => Err(std::io::Error::other("file already committed")),
        }
    }

    fn write_all(&mut self, buf: &[u8]) -> std::io::Result<()> {
        match self.file.as_mut() {
            Some(f) => f.write_all(buf),
            None => Err(std::io::Error::other("file already committed")),
        }
    }

    fn flush(&mut self) -> std::io::Result<()> {
        match self.file.as_mut() {
            Some(f) => f.flush(),
            None => Ok(()),
        }
    }
}

impl Drop for AtomicFile {
    fn drop(&mut self) {
        if self.file.take().is_some() {
            let _ = std::fs::remove_file(&self.tmp);
        }
    }
}

/// Formats a float so that it round-trips exactly (Rust's shortest representation), or an empty
/// string for a missing value. NaN and infinities never reach an output file.
pub fn fmt_f64(x: Option<f64>) -> String {
    let mut s = String::new();
    push_f64(&mut s, x);
    s
}

/// Appends what [`fmt_f64`] returns to `buf`: the large tables format every number into one
/// reused buffer instead of a new string per cell.
///
/// The text is Rust's `Display` of the value (shortest digits that round-trip, plain notation,
/// no exponent). Values with up to 15 significant digits (a catalogue's numbers) take their
/// digits from the `ryu` crate, about twice as fast as the standard library's Grisu/Dragon path
/// (a tenth of `vet` on a million objects, perf), laid out as `Display` does: both give the
/// shortest round-tripping digits closest to the value. They differ only in breaking a tie
/// between two equally close candidates (ryu to even, the standard library upwards:
/// 1658206780088562.25 prints `…562.2` and `…562.3`), and a tie between n-digit candidates
/// needs 10ⁿ ≥ 2⁵² / 2, that is n ≥ 16 (the candidates are 10ᵏ apart and must both lie within
/// half an ulp, ≤ 2⁻⁵³ of the value, of it). So 16 and 17 digits go through `Display` itself;
/// a test compares the two paths on random bit patterns and decimals.
pub fn push_f64(buf: &mut String, x: Option<f64>) {
    match x {
        // −0 prints as 0: the sign of a zero carries no information in a table.
        // (A float pattern compares with `==`: −0 matches too.)
        Some(0.0) => buf.push('0'),
        Some(v) if v.is_finite() => {
            let mut digits = ryu::Buffer::new();
            if !push_plain(buf, digits.format_finite(v)) {
                use std::fmt::Write;
                // 16 or 17 significant digits; writing into a String cannot fail.
                let _ = write!(buf, "{v}");
            }
        }
        _ => {}
    }
}

/// Lays out ryu's text (`-1.25e-7`, `0.001`, `123.0`, `1e16`) as `Display` does (`-0.000000125`,
/// `0.001`, `123`, `10000000000000000`). `false`, with nothing appended, if the text is not of
/// that form.
fn push_plain(buf: &mut String, text: &str) -> bool {
    let (negative, text) = match text.strip_prefix('-') {
        Some(rest) => (true, rest),
        None => (false, text),
    };
    let (mantissa, exponent) = match text.split_once('e') {
        Some((m, e)) => match e.parse::<i32>() {
            Ok(e) => (m, e),
            Err(_) => return false,
        },
        None => (text, 0),
    };
    let (int, frac) = mantissa.split_once('.').unwrap_or((mantissa, ""));
    let mut digits = [0u8; 48];
    let n = int.len() + frac.len();
    if n > digits.len()
        || !int.bytes().chain(frac.bytes()).all(|b| b.is_ascii_digit())
        || int.len() > 400
    {
        return false;
    }
    digits[..int.len()].copy_from_slice(int.as_bytes());
    digits[int.len()..n].copy_from_slice(frac.as_bytes());
    // The decimal point falls after `point` digits of `digits`.
    let mut point = int.len() as i32 + exponent;
    let mut start = 0;
    while start < n && digits[start] == b'0' {
        start += 1;
        point -= 1;
    }
    let mut end = n;
    while end > start && digits[end - 1] == b'0' {
        end -= 1;
    }
    let d = &digits[start..end];
    // 16 or 17 digits: a tie is possible, where ryu and `Display` may differ (see `push_f64`).
    if d.is_empty() || d.len() >= 16 {
        return false;
    }
    // Digits only: valid UTF-8.
    let d = std::str::from_utf8(d).unwrap_or_default();
    if negative {
        buf.push('-');
    }
    if point <= 0 {
        buf.push_str("0.");
        buf.extend(std::iter::repeat_n('0', point.unsigned_abs() as usize));
        buf.push_str(d);
    } else if (point as usize) < d.len() {
        let (a, b) = d.split_at(point as usize);
        buf.push_str(a);
        buf.push('.');
        buf.push_str(b);
    } else {
        buf.push_str(d);
        buf.extend(std::iter::repeat_n('0', point as usize - d.len()));
    }
    true
}

#[cfg(test)]
mod float_tests {
    use super::push_f64;

    fn display(v: f64) -> String {
        if v == 0.0 {
            "0".to_string()
        } else {
            format!("{v}")
        }
    }

    fn check(v: f64) {
        let mut got = String::new();
        push_f64(&mut got, Some(v));
        assert_eq!(got, display(v), "bits {:#x}", v.to_bits());
    }

    /// The bytes are the standard library's `Display` (the formatter every output used before,
    /// the reference here): random bit patterns over the whole range, subnormals included, and
    /// short decimals like a catalogue's, scaled by unit factors (xorshift64, fixed seed).
    #[test]
    fn same_text_as_display() {
        let mut state: u64 = 0x9e37_79b9_7f4a_7c15;
        let mut next = move || {
            state ^= state << 13;
            state ^= state >> 7;
            state ^= state << 17;
            state
        };
        for _ in 0..300_000 {
            let v = f64::from_bits(next());
            if v.is_finite() {
                check(v);
            }
        }
        for _ in 0..300_000 {
            let r = next();
            let digits = (r % 10_000_000) as f64;
            let scale = 10f64.powi((r >> 32) as i32 % 12 - 9);
            let v = digits * scale;
            check(v);
            check(-v);
            check(v * 9.547_919_384_243_27e-4); // a Jupiter mass in solar masses
            check(v.ln_1p());
        }
        // Short dyadic values (exact halves, quarters, …), where ties between candidates live.
        for _ in 0..300_000 {
            let r = next();
            let mantissa = (r >> 11) >> (r % 48);
            let v = mantissa as f64 / (1u64 << (r >> 58)) as f64;
            check(v);
        }
        for v in [
            f64::MIN_POSITIVE,
            f64::MAX,
            f64::MIN,
            f64::EPSILON,
            5e-324,
            1e16,
            1e15,
            123456789012345680.0,
            0.1,
            0.3,
            1.0,
            -0.0,
            1e-5,
            1e-6,
            1e-7,
            2.5,
            9007199254740993.0,
            f64::from_bits(0x4317_9085_685d_83c9), // a tie: …562.25
        ] {
            check(v);
        }
    }
}

//! General-purpose compressors as yardsticks: bits per byte of `xz -9e` and `gzip -9` on
//! the same bytes a model is scored on (a model that cannot beat them has learned little).

use std::io::Write as _;
use std::process::{Command, Stdio};

/// The yardsticks: program and arguments (compress standard input to standard output).
pub const YARDSTICKS: [(&str, &[&str]); 2] = [("xz", &["-9e", "-c"]), ("gzip", &["-9", "-c"])];

/// 8 × compressed bytes / `text` bytes by `program`, or `None` if it is not installed or
/// fails (the table then shows "-").
pub fn bits_per_byte(program: &str, args: &[&str], text: &[u8]) -> Option<f64> {
    let mut child = Command::new(program)
        .args(args)
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .stderr(Stdio::null())
        .spawn()
        .ok()?;
    let mut stdin = child.stdin.take()?;
    let input = text.to_vec();
    // Write from a thread so a full output pipe cannot stall the writer.
    let writer = std::thread::spawn(move || stdin.write_all(&input));
    let out = child.wait_with_output().ok()?;
    writer.join().ok()?.ok()?;
    (out.status.success() && !text.is_empty())
        .then(|| 8.0 * out.stdout.len() as f64 / text.len() as f64)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn repeated_text_compresses_far_below_eight_bits() {
        // A 100-fold repeated sentence: any LZ77-family compressor stores it in a few
        // bytes per repeat at most (common practice, no source).
        let text = b"the hut is open from june to september. ".repeat(100);
        for (program, args) in YARDSTICKS {
            if let Some(bpb) = bits_per_byte(program, args, &text) {
                assert!(bpb < 0.5, "{program}: {bpb}");
            }
        }
        assert_eq!(bits_per_byte("no-such-program-here", &[], &text), None);
    }
}

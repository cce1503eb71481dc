//! The line the firmware writes after each keystroke.
//!
//! ```text
//! TEXT<TAB>SUGGESTION<TAB>0xBITS<TAB>SUGGESTION<TAB>0xBITS...<LF>
//! ```
//! `TEXT` is everything typed so far, each `SUGGESTION` the bytes offered, and `0xBITS` its
//! score (a natural-log probability) as the f32 bit pattern in hex, so that the host can
//! compare it exactly and the firmware needs no float formatting. Bytes outside printable
//! ASCII, the backslash and the tab are escaped as `\xNN` (lowercase hex), so a line never
//! holds a raw tab or newline and can be split on tabs.

use embedded_io::Write;
use inkling_core::session::Suggestion;

use crate::number_text::hex_u32;

/// Writes `bytes` with the escaping described in the module documentation.
pub fn write_escaped<W: Write>(out: &mut W, bytes: &[u8]) -> Result<(), W::Error> {
    // Runs of plain bytes go out in one write.
    let mut plain_from = 0;
    for (i, &b) in bytes.iter().enumerate() {
        let plain = (0x20..0x7f).contains(&b) && b != b'\\';
        if !plain {
            out.write_all(&bytes[plain_from..i])?;
            let hex = hex_u32(u32::from(b));
            out.write_all(&[b'\\', b'x', hex[8], hex[9]])?;
            plain_from = i + 1;
        }
    }
    out.write_all(&bytes[plain_from..])
}

/// Writes one output line: the typed `text`, then each suggestion with its score bits.
pub fn write_line<W: Write>(
    out: &mut W,
    text: &[u8],
    suggestions: &[Suggestion],
) -> Result<(), W::Error> {
    write_escaped(out, text)?;
    for s in suggestions {
        out.write_all(b"\t")?;
        write_escaped(out, &s.text)?;
        out.write_all(b"\t")?;
        out.write_all(&hex_u32(s.logprob.to_bits()))?;
    }
    out.write_all(b"\n")
}

#[cfg(test)]
mod tests {
    use super::*;

    fn line(text: &[u8], suggestions: &[(&[u8], f32)]) -> String {
        let suggestions: Vec<Suggestion> = (suggestions.iter())
            .map(|&(bytes, logprob)| Suggestion {
                text: inkling_core::session::Word::from_slice(bytes).unwrap(),
                logprob,
                finished: true,
            })
            .collect();
        let mut out = Vec::new();
        write_line(&mut out, text, &suggestions).unwrap();
        String::from_utf8(out).unwrap()
    }

    #[test]
    fn scores_are_ieee754_bit_patterns() {
        // IEEE 754 binary32: -1.0 is 0xbf800000, -0.5 is 0xbf000000 (from memory; Rust's
        // `f32::to_bits` on the host agrees).
        assert_eq!(
            line(b"the q", &[(b"uick", -0.5), (b"ueen", -1.0)]),
            "the q\tuick\t0xbf000000\tueen\t0xbf800000\n"
        );
    }

    #[test]
    fn control_bytes_backslash_and_utf8_are_escaped() {
        assert_eq!(line(b"a\tb\\c\n", &[]), "a\\x09b\\x5cc\\x0a\n");
        assert_eq!(
            line("é".as_bytes(), &[(b" ", -2.0)]),
            "\\xc3\\xa9\t \t0xc0000000\n"
        );
    }

    #[test]
    fn empty_text_and_no_suggestions_is_an_empty_line() {
        assert_eq!(line(b"", &[]), "\n");
    }
}

//! What a board profile does with a session: type a text at start-up, then take 12-key
//! presses, writing one suggestion line (see [`suggestion_line`](crate::suggestion_line))
//! and the cycles of each keystroke (`figure NAME VALUE` lines) to any `embedded_io::Write`
//! (a UART or an RTT channel). The cycle counter is the board's own, passed in as a closure.

use embedded_io::Write;
use inkling_core::engine::weights::Weights;
use inkling_core::session::{KeyMap, SearchOptions, Session, MAX_WORD_LEN};

use crate::number_text::{decimal_u64, U64_DIGITS};
use crate::suggestion_line::write_line;

/// Writes `figure NAME VALUE`.
pub fn write_figure<O: Write>(out: &mut O, name: &str, value: u64) -> Result<(), O::Error> {
    let mut digits = [0u8; U64_DIGITS];
    out.write_all(b"figure ")?;
    out.write_all(name.as_bytes())?;
    out.write_all(b" ")?;
    out.write_all(decimal_u64(value, &mut digits))?;
    out.write_all(b"\n")
}

/// Types `text` into `session` byte by byte (a refused byte, at a word's longest, is
/// skipped) and after each writes the suggestions and `figure keystroke_cycles N`: the
/// cycles of the edit and the whole search, as `cycles` counts them.
pub fn type_text<X, O, const K: usize, const H: usize>(
    session: &mut Session<'_, X, K, H>,
    options: &SearchOptions<'_>,
    text: &[u8],
    out: &mut O,
    cycles: &mut impl FnMut() -> u64,
) -> Result<(), O::Error>
where
    X: Weights,
    O: Write,
{
    for (typed, &byte) in text.iter().enumerate() {
        let start = cycles();
        let found = session.push(byte).and_then(|()| session.suggest(options));
        let spent = cycles().wrapping_sub(start);
        let list = found.as_ref().map_or(&[][..], |f| f.list.as_slice());
        let shown = list.iter().map(|s| (s.text.as_slice(), s.logprob));
        write_line(out, text.get(..=typed).unwrap_or(text), shown)?;
        write_figure(out, "keystroke_cycles", spent)?;
    }
    Ok(())
}

/// 12-key entry on a keypad: digit keys spell the current word (`Session::keys`), `0` takes
/// the first word offered and a space, `*` takes a key back, `#` starts afresh.
#[derive(Debug, Default)]
pub struct KeyEntry {
    keys: [u8; MAX_WORD_LEN],
    len: usize,
}

impl KeyEntry {
    /// No keys pressed yet.
    pub const fn new() -> Self {
        KeyEntry {
            keys: [0; MAX_WORD_LEN],
            len: 0,
        }
    }

    /// The digit keys of the current word.
    pub fn keys(&self) -> &[u8] {
        self.keys.get(..self.len).unwrap_or(&[])
    }

    /// Handles one key press and writes the words offered for the keys so far (the keys
    /// stand in for the text) and `figure keypress_cycles N`.
    pub fn press<X, O, const K: usize, const H: usize>(
        &mut self,
        key: u8,
        session: &mut Session<'_, X, K, H>,
        options: &SearchOptions<'_>,
        out: &mut O,
        cycles: &mut impl FnMut() -> u64,
    ) -> Result<(), O::Error>
    where
        X: Weights,
        O: Write,
    {
        let start = cycles();
        match key {
            b'#' => {
                self.len = 0;
                let _ = session.clear();
            }
            b'*' => self.len = self.len.saturating_sub(1),
            b'0' => {
                // The first word offered, then a space; the keys start a new word.
                if let Ok(found) = session.keys(self.keys(), &KeyMap::E161, options) {
                    if let Some(first) = found.list.first() {
                        let _ = session.push_bytes(first.text.as_slice());
                        let _ = session.push(b' ');
                    }
                }
                self.len = 0;
            }
            digit => {
                if let Some(slot) = self.keys.get_mut(self.len) {
                    *slot = digit;
                    self.len += 1;
                }
            }
        }
        let found = session.keys(self.keys(), &KeyMap::E161, options);
        let spent = cycles().wrapping_sub(start);
        let list = found.as_ref().map_or(&[][..], |f| f.list.as_slice());
        let shown = list.iter().map(|s| (s.text.as_slice(), s.logprob));
        write_line(out, self.keys(), shown)?;
        write_figure(out, "keypress_cycles", spent)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use inkling_core::image::example::tiny_image;
    use inkling_core::session::SessionBuffers;
    use inkling_core::Model;

    #[test]
    fn a_typed_text_gives_one_line_and_one_figure_a_byte() {
        let image = tiny_image();
        let model = Model::from_bytes(&image).unwrap();
        let mut buffers = SessionBuffers::<[f32; 8192], [f32; 512], [i16; 64]>::new();
        let mut session: Session<_, 2> = buffers.session(model).unwrap();
        let mut out = Vec::new();
        let mut clock = 0u64;
        let mut cycles = || {
            clock += 10;
            clock
        };
        type_text(
            &mut session,
            &SearchOptions::new(2),
            b"ab c",
            &mut out,
            &mut cycles,
        )
        .unwrap();
        let text = String::from_utf8(out).unwrap();
        let lines: Vec<&str> = text.lines().collect();
        assert_eq!(lines.len(), 8);
        assert!(lines[0].starts_with("a") && lines[6].starts_with("ab c"));
        // Each keystroke is timed between two reads of the counter: 10 apart here.
        assert_eq!(lines[1], "figure keystroke_cycles 10");
    }

    #[test]
    fn star_takes_a_key_back_and_hash_starts_afresh() {
        let image = tiny_image();
        let model = Model::from_bytes(&image).unwrap();
        let mut buffers = SessionBuffers::<[f32; 8192], [f32; 512], [i16; 64]>::new();
        let mut session: Session<_, 2> = buffers.session(model).unwrap();
        let (mut out, mut cycles) = (Vec::new(), || 0u64);
        let mut entry = KeyEntry::new();
        let options = SearchOptions::new(2);
        for key in *b"43" {
            entry
                .press(key, &mut session, &options, &mut out, &mut cycles)
                .unwrap();
        }
        assert_eq!(entry.keys(), b"43");
        entry
            .press(b'*', &mut session, &options, &mut out, &mut cycles)
            .unwrap();
        assert_eq!(entry.keys(), b"4");
        entry
            .press(b'#', &mut session, &options, &mut out, &mut cycles)
            .unwrap();
        assert_eq!(entry.keys(), b"");
        // Every press wrote its line (the keys, then the words) and its figure.
        let text = String::from_utf8(out).unwrap();
        assert_eq!(text.lines().filter(|l| l.starts_with("figure ")).count(), 4);
        assert!(text.lines().any(|l| l.starts_with("43")));
    }
}

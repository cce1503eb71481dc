//! The program every board profile runs, written once over the board's parts ([`run`]): a
//! session over the image and word lists in flash, a scenario text typed at start-up, then
//! bytes typed on a serial terminal and 12-key presses on a keypad, each answered with one
//! suggestion line (see [`suggestion_line`](crate::suggestion_line)) and its cycles
//! (`figure NAME VALUE` lines), on the serial port. A board brings its clocks, pins, serial
//! port (any `embedded_io` 0.7 `Read + ReadReady + Write`; [`NbSerial`](crate::nb_serial)
//! adapts an `embedded-hal-nb` one), delay and cycle counter, and its memory layout.

use embedded_hal::delay::DelayNs;
use embedded_hal::digital::{InputPin, OutputPin};
use embedded_io::{Read, ReadReady, Write};
use inkling_core::engine::weights::Weights;
use inkling_core::session::{
    KeyMap, SearchOptions, Session, StaticSessionBuffers, DEFAULT_HISTORY, MAX_WORD_LEN,
};
use inkling_core::Model;

use crate::flash_word_lists::FlashWordLists;
use crate::keypad::{Keypad, SCAN_PERIOD_MS};
use crate::number_text::{decimal_u64, U64_DIGITS};
use crate::suggestion_line::write_line;

/// Typed at start-up, for the figures (invented).
pub const STARTUP_TEXT: &[u8] = b"base, this is the north hut: all well";

/// Runs a board: validates `image` (`figure validate_cycles N`), sets up a session of `K`
/// suggestions in `buffers` with the word lists' filter, types [`STARTUP_TEXT`], then
/// forever takes bytes from `serial` ([`type_byte`]) and key presses from the keypad on
/// `keypad_pins` (its rows, then its columns: [`Keypad::new`]; [`KeyEntry::press`]),
/// looking at both every
/// [`SCAN_PERIOD_MS`](crate::keypad::SCAN_PERIOD_MS). `cycles` reads the board's cycle
/// counter. If the set-up fails it writes `stopped: WHAT` and waits forever.
pub fn run<const K: usize, const F: usize, const W: usize, const A: usize>(
    image: &'static [u8],
    words: &FlashWordLists,
    buffers: &'static StaticSessionBuffers<F, W, A>,
    mut serial: impl Read + ReadReady + Write,
    keypad_pins: ([impl OutputPin; 4], [impl InputPin; 3]),
    mut delay: impl DelayNs,
    mut cycles: impl FnMut() -> u64,
) -> ! {
    let start = cycles();
    let Ok(model) = Model::from_bytes(image) else {
        stop(&mut serial, &mut delay, "the built-in image is not valid")
    };
    let _ = write_figure(&mut serial, "validate_cycles", cycles().wrapping_sub(start));
    let Ok(filter) = words.filter() else {
        stop(&mut serial, &mut delay, "a built-in word list is not valid")
    };
    let Ok(mut session) = buffers.session::<_, K, DEFAULT_HISTORY>(model) else {
        stop(
            &mut serial,
            &mut delay,
            "the session buffers are too small or taken",
        )
    };
    let Ok(mut keypad) = Keypad::new(keypad_pins.0, keypad_pins.1) else {
        stop(&mut serial, &mut delay, "a keypad row pin failed")
    };
    let options = SearchOptions {
        filter,
        ..SearchOptions::new(K)
    };
    for &byte in STARTUP_TEXT {
        let _ = type_byte(&mut session, &options, byte, &mut serial, &mut cycles);
    }
    let _ = session.clear();

    let mut entry = KeyEntry::new();
    loop {
        let mut byte = [0u8; 1];
        while serial.read_ready().unwrap_or(false) {
            if let Ok(1) = serial.read(&mut byte) {
                let _ = type_byte(&mut session, &options, byte[0], &mut serial, &mut cycles);
            }
        }
        if let Ok(Some(key)) = keypad.scan(&mut delay) {
            let _ = entry.press(key, &mut session, &options, &mut serial, &mut cycles);
        }
        delay.delay_ms(SCAN_PERIOD_MS);
    }
}

/// Writes `stopped: WHAT` and waits forever.
fn stop(out: &mut impl Write, delay: &mut impl DelayNs, what: &str) -> ! {
    let _ = out
        .write_all(b"stopped: ")
        .and_then(|()| out.write_all(what.as_bytes()))
        .and_then(|()| out.write_all(b"\n"));
    loop {
        delay.delay_ms(1000);
    }
}

/// Writes `figure NAME VALUE`.
pub fn write_figure<O: Write>(out: &mut O, name: &str, value: u64) -> Result<(), O::Error> {
    let mut digits = [0u8; U64_DIGITS];
    out.write_all(b"figure ")?;
    out.write_all(name.as_bytes())?;
    out.write_all(b" ")?;
    out.write_all(decimal_u64(value, &mut digits))?;
    out.write_all(b"\n")
}

/// Handles one typed byte as the QEMU programs do: `0x08` and `0x7F` take the last byte
/// back, a carriage return or line feed starts afresh (a terminal sends CR for Enter), any
/// other byte is pushed (a refused one, at a word's longest, changes nothing). Then it
/// writes the text typed so far (the session's history, its last `H` bytes) with the
/// suggestions, and `figure keystroke_cycles N`: the cycles of the edit and the whole
/// search, as `cycles` counts them.
pub fn type_byte<X, O, const K: usize, const H: usize>(
    session: &mut Session<'_, X, K, H>,
    options: &SearchOptions<'_>,
    byte: u8,
    out: &mut O,
    cycles: &mut impl FnMut() -> u64,
) -> Result<(), O::Error>
where
    X: Weights,
    O: Write,
{
    let start = cycles();
    let edited = match byte {
        0x08 | 0x7f => session.backspace().map(|_| ()),
        b'\r' | b'\n' => session.clear(),
        _ => session.push(byte),
    };
    let found = match edited {
        Ok(()) | Err(inkling_core::Error::CapacityExceeded { .. }) => session.suggest(options),
        Err(e) => Err(e),
    };
    let spent = cycles().wrapping_sub(start);
    let mut text = [0u8; H];
    let typed = session
        .history()
        .iter()
        .zip(text.iter_mut())
        .map(|(b, t)| *t = b)
        .count();
    let list = found.as_ref().map_or(&[][..], |f| f.list.as_slice());
    write_line(out, text.get(..typed).unwrap_or(&[]), list)?;
    write_figure(out, "keystroke_cycles", spent)
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
        write_line(out, self.keys(), list)?;
        write_figure(out, "keypress_cycles", spent)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use inkling_core::image::example::tiny_image;
    use inkling_core::session::{SessionBuffers, WordFilter, WordList};

    #[test]
    fn each_typed_byte_gives_one_line_and_one_figure() {
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
        let options = SearchOptions::new(2);
        for &byte in b"ab c\x7f\rd" {
            type_byte(&mut session, &options, byte, &mut out, &mut cycles).unwrap();
        }
        let text = String::from_utf8(out).unwrap();
        let lines: Vec<&str> = text.lines().collect();
        assert_eq!(lines.len(), 14);
        // The text so far, after a backspace and after the carriage return that clears it.
        assert!(lines[0].starts_with('a') && lines[6].starts_with("ab c"));
        assert!(lines[8].starts_with("ab ") && !lines[8].starts_with("ab c"));
        assert!(lines[10].is_empty() || lines[10].starts_with('\t'));
        assert!(lines[12].starts_with('d'));
        // Each keystroke is timed between two reads of the counter: 10 apart here.
        assert_eq!(lines[1], "figure keystroke_cycles 10");
    }

    #[test]
    fn a_denied_word_is_not_offered() {
        let image = tiny_image();
        let model = Model::from_bytes(&image).unwrap();
        let mut buffers = SessionBuffers::<[f32; 8192], [f32; 512], [i16; 64]>::new();
        let mut session: Session<_, 2> = buffers.session(model).unwrap();
        let (mut out, mut cycles) = (Vec::new(), || 0u64);
        let options = SearchOptions::new(2);
        type_byte(&mut session, &options, b'a', &mut out, &mut cycles).unwrap();
        // The first word offered after "a", then the same keystroke with it denied.
        let text = String::from_utf8(out).unwrap();
        let first = text
            .lines()
            .next()
            .unwrap()
            .split('\t')
            .nth(1)
            .unwrap()
            .to_string();
        let denied = format!("{first}\n");
        let options = SearchOptions {
            filter: WordFilter {
                deny: WordList::new(denied.as_bytes()).unwrap(),
                lexicon: None,
            },
            ..SearchOptions::new(2)
        };
        session.clear().unwrap();
        let mut out = Vec::new();
        type_byte(&mut session, &options, b'a', &mut out, &mut cycles).unwrap();
        let text = String::from_utf8(out).unwrap();
        let words: Vec<&str> = text
            .lines()
            .next()
            .unwrap()
            .split('\t')
            .skip(1)
            .step_by(2)
            .collect();
        assert!(
            !words.contains(&first.as_str()),
            "{first:?} offered: {words:?}"
        );
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

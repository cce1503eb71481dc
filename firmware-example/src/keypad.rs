//! A 4×3 key matrix scanner producing the twelve keys of ITU-T E.161.
//!
//! Wiring: four row lines are outputs, three column lines are inputs with pull-ups, and each
//! key joins one row to one column. A scan drives one row low at a time (the others high),
//! waits [`SETTLE_US`] for the lines to settle, and reads the columns: a low column means the
//! key at that row and column is closed.
//!
//! Debounce: a reading (no key, one key, several keys) must be seen on
//! [`DEBOUNCE_SCANS`] consecutive scans before it counts. Call [`Keypad::scan`] every
//! [`SCAN_PERIOD_MS`], so a press counts after 20 ms of stable contact; contact bounce settles well within that
//! (common practice, no source). A key is reported once, when it becomes the only key down
//! after all keys were up; a second key pressed before the first is released is ignored (no
//! rollover), which suits one-finger typing on a 12-key panel.

use embedded_hal::delay::DelayNs;
use embedded_hal::digital::{InputPin, OutputPin};

/// The keys by row and column, as on the telephone keypad of ITU-T E.161 (Figure 1):
/// `1 2 3 / 4 5 6 / 7 8 9 / * 0 #`.
pub const LAYOUT: [[u8; 3]; 4] = [*b"123", *b"456", *b"789", *b"*0#"];

/// Consecutive equal scans before a reading counts.
pub const DEBOUNCE_SCANS: u8 = 4;

/// Milliseconds between two scans.
pub const SCAN_PERIOD_MS: u32 = 5;

/// Microseconds between driving a row and reading the columns.
pub const SETTLE_US: u32 = 10;

/// What one scan saw.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Reading {
    Released,
    One(u8),
    Several,
}

/// A pin failed during a scan.
#[derive(Debug, Clone, Copy, PartialEq, Eq, thiserror::Error)]
pub enum ScanError<RowError, ColumnError> {
    /// Driving a row line failed.
    #[error("keypad row line {row}: {error:?}")]
    Row {
        /// The row (0 is the top one).
        row: usize,
        /// The pin's error.
        error: RowError,
    },
    /// Reading a column line failed.
    #[error("keypad column line {column}: {error:?}")]
    Column {
        /// The column (0 is the left one).
        column: usize,
        /// The pin's error.
        error: ColumnError,
    },
}

/// A debounced scanner over four row output pins and three column input pins.
#[derive(Debug)]
pub struct Keypad<R, C> {
    rows: [R; 4],
    columns: [C; 3],
    candidate: Reading,
    seen: u8,
    stable: Reading,
}

impl<R: OutputPin, C: InputPin> Keypad<R, C> {
    /// A scanner over `rows` (top to bottom) and `columns` (left to right); all rows are set
    /// high (idle).
    pub fn new(mut rows: [R; 4], columns: [C; 3]) -> Result<Self, ScanError<R::Error, C::Error>> {
        for (row, pin) in rows.iter_mut().enumerate() {
            pin.set_high()
                .map_err(|error| ScanError::Row { row, error })?;
        }
        Ok(Keypad {
            rows,
            columns,
            candidate: Reading::Released,
            seen: 0,
            stable: Reading::Released,
        })
    }

    /// Scans the matrix once and returns the E.161 key (`b'0'..=b'9'`, `b'*'`, `b'#'`) that
    /// has just been pressed, if any.
    pub fn scan<D: DelayNs>(
        &mut self,
        delay: &mut D,
    ) -> Result<Option<u8>, ScanError<R::Error, C::Error>> {
        let reading = self.read_matrix(delay)?;
        if reading != self.candidate {
            self.candidate = reading;
            self.seen = 0;
        }
        self.seen = self.seen.saturating_add(1);
        if self.seen < DEBOUNCE_SCANS || reading == self.stable {
            return Ok(None);
        }
        let was = self.stable;
        self.stable = reading;
        Ok(match (was, reading) {
            (Reading::Released, Reading::One(key)) => Some(key),
            _ => None,
        })
    }

    fn read_matrix<D: DelayNs>(
        &mut self,
        delay: &mut D,
    ) -> Result<Reading, ScanError<R::Error, C::Error>> {
        let mut reading = Reading::Released;
        for (row, (pin, keys)) in self.rows.iter_mut().zip(LAYOUT.iter()).enumerate() {
            pin.set_low()
                .map_err(|error| ScanError::Row { row, error })?;
            delay.delay_us(SETTLE_US);
            let mut result = Ok(());
            for (column, (input, &key)) in self.columns.iter_mut().zip(keys.iter()).enumerate() {
                match input.is_low() {
                    Ok(false) => {}
                    Ok(true) => {
                        reading = match reading {
                            Reading::Released => Reading::One(key),
                            _ => Reading::Several,
                        }
                    }
                    Err(error) => {
                        result = Err(ScanError::Column { column, error });
                        break;
                    }
                }
            }
            // Back to idle even when a column failed, so no row stays driven.
            pin.set_high()
                .map_err(|error| ScanError::Row { row, error })?;
            result?;
        }
        Ok(reading)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use embedded_hal::digital::{ErrorKind, ErrorType};
    use std::cell::RefCell;
    use std::rc::Rc;

    /// The wires: which row is driven low, and which keys are held down.
    #[derive(Default)]
    struct Matrix {
        driven: Option<usize>,
        down: [[bool; 3]; 4],
        broken_column: Option<usize>,
    }

    type Wires = Rc<RefCell<Matrix>>;

    struct RowPin(usize, Wires);
    struct ColumnPin(usize, Wires);

    impl ErrorType for RowPin {
        type Error = ErrorKind;
    }
    impl ErrorType for ColumnPin {
        type Error = ErrorKind;
    }

    impl OutputPin for RowPin {
        fn set_low(&mut self) -> Result<(), ErrorKind> {
            let mut m = self.1.borrow_mut();
            // A scanner must never drive two rows at once (that shorts keys across rows).
            assert_eq!(m.driven, None, "two rows driven low together");
            m.driven = Some(self.0);
            Ok(())
        }
        fn set_high(&mut self) -> Result<(), ErrorKind> {
            let mut m = self.1.borrow_mut();
            if m.driven == Some(self.0) {
                m.driven = None;
            }
            Ok(())
        }
    }

    impl InputPin for ColumnPin {
        fn is_high(&mut self) -> Result<bool, ErrorKind> {
            self.is_low().map(|low| !low)
        }
        fn is_low(&mut self) -> Result<bool, ErrorKind> {
            let m = self.1.borrow();
            if m.broken_column == Some(self.0) {
                return Err(ErrorKind::Other);
            }
            Ok(m.driven.is_some_and(|r| m.down[r][self.0]))
        }
    }

    struct NoDelay;
    impl DelayNs for NoDelay {
        fn delay_ns(&mut self, _ns: u32) {}
    }

    fn keypad() -> (Keypad<RowPin, ColumnPin>, Wires) {
        let wires: Wires = Rc::default();
        let rows = [0, 1, 2, 3].map(|r| RowPin(r, wires.clone()));
        let columns = [0, 1, 2].map(|c| ColumnPin(c, wires.clone()));
        (Keypad::new(rows, columns).unwrap(), wires)
    }

    /// Scans `times` times and collects the keys reported.
    fn scan(pad: &mut Keypad<RowPin, ColumnPin>, times: usize) -> Vec<u8> {
        (0..times)
            .filter_map(|_| pad.scan(&mut NoDelay).unwrap())
            .collect()
    }

    #[test]
    fn every_position_gives_its_e161_key() {
        // ITU-T E.161 Figure 1: 1 2 3 / 4 5 6 / 7 8 9 / * 0 #.
        let expected = b"123456789*0#";
        let (mut pad, wires) = keypad();
        for (i, &key) in expected.iter().enumerate() {
            wires.borrow_mut().down[i / 3][i % 3] = true;
            assert_eq!(scan(&mut pad, 10), vec![key]);
            wires.borrow_mut().down[i / 3][i % 3] = false;
            assert_eq!(scan(&mut pad, 10), Vec::<u8>::new());
            assert_eq!(wires.borrow().driven, None, "a row left driven");
        }
    }

    #[test]
    fn a_press_counts_after_the_debounce_scans_and_once() {
        let (mut pad, wires) = keypad();
        wires.borrow_mut().down[1][1] = true; // 5
        let keys: Vec<_> = (0..8).map(|_| pad.scan(&mut NoDelay).unwrap()).collect();
        let first = keys.iter().position(Option::is_some).unwrap();
        assert_eq!(first + 1, DEBOUNCE_SCANS as usize);
        assert_eq!(
            keys.iter().flatten().copied().collect::<Vec<_>>(),
            vec![b'5']
        );
    }

    #[test]
    fn bouncing_contact_gives_one_key() {
        let (mut pad, wires) = keypad();
        let mut got = Vec::new();
        // Closed and open on alternate scans (shorter than the debounce), then closed.
        for closed in [true, false, true, false, true, true, true, true, true, true] {
            wires.borrow_mut().down[3][2] = closed;
            got.extend(pad.scan(&mut NoDelay).unwrap());
        }
        assert_eq!(got, vec![b'#']);
    }

    #[test]
    fn a_second_key_before_release_is_ignored() {
        let (mut pad, wires) = keypad();
        wires.borrow_mut().down[0][0] = true;
        assert_eq!(scan(&mut pad, 6), vec![b'1']);
        wires.borrow_mut().down[2][1] = true;
        assert_eq!(scan(&mut pad, 6), Vec::<u8>::new());
        wires.borrow_mut().down[0][0] = false;
        assert_eq!(scan(&mut pad, 6), Vec::<u8>::new());
        wires.borrow_mut().down[2][1] = false;
        scan(&mut pad, 6);
        wires.borrow_mut().down[2][1] = true;
        assert_eq!(scan(&mut pad, 6), vec![b'8']);
    }

    #[test]
    fn a_failing_column_names_the_line_and_releases_the_row() {
        let (mut pad, wires) = keypad();
        wires.borrow_mut().broken_column = Some(2);
        let err = pad.scan(&mut NoDelay).unwrap_err();
        assert_eq!(
            err,
            ScanError::Column {
                column: 2,
                error: ErrorKind::Other
            }
        );
        assert_eq!(err.to_string(), "keypad column line 2: Other");
        assert_eq!(wires.borrow().driven, None);
    }
}

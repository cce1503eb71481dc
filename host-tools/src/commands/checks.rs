//! Arguments checked before any work: one rule and one message for each kind of number.

use super::suggest::MAX_COUNT;
use crate::error::HostError;

/// A number of suggestions (or beams): 1 to [`MAX_COUNT`], the beams a session here holds.
pub fn count(flag: &str, value: usize) -> Result<(), HostError> {
    if (1..=MAX_COUNT).contains(&value) {
        Ok(())
    } else {
        Err(HostError::Usage(format!(
            "{flag} {value}: give 1 to {MAX_COUNT} (the suggestions a typing session here holds)"
        )))
    }
}

/// An amount that must be at least 1 (bytes, shapes to show).
pub fn at_least_one(flag: &str, value: usize) -> Result<(), HostError> {
    if value >= 1 {
        Ok(())
    } else {
        Err(HostError::Usage(format!(
            "{flag} 0: give at least 1; nothing would be measured"
        )))
    }
}

/// A rate or a clock: finite and above 0.
pub fn positive(flag: &str, value: f64) -> Result<(), HostError> {
    if value.is_finite() && value > 0.0 {
        Ok(())
    } else {
        Err(HostError::Usage(format!(
            "{flag} {value}: give a number above 0"
        )))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn bounds_are_inclusive() {
        assert!(count("--count", 0).is_err());
        assert!(count("--count", 1).is_ok() && count("--count", MAX_COUNT).is_ok());
        assert!(count("--count", MAX_COUNT + 1).is_err());
        assert!(at_least_one("--bytes", 0).is_err() && at_least_one("--bytes", 1).is_ok());
        assert!(positive("--clock", 0.0).is_err() && positive("--clock", f64::NAN).is_err());
        assert!(positive("--clock", 0.5).is_ok());
    }
}

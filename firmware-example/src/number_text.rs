//! Integers as ASCII text, without `core::fmt`.
//!
//! Formatting through `core::fmt` pulls several kilobytes into flash (one f32 alone costs
//! about 14 KB); the firmware prints only integers, so these few lines are all it needs.

/// `value` as `0x` and eight lowercase hex digits (C's `0x%08x`).
pub fn hex_u32(value: u32) -> [u8; 10] {
    const DIGITS: &[u8; 16] = b"0123456789abcdef";
    let mut out = *b"0x00000000";
    for (i, slot) in out.iter_mut().skip(2).enumerate() {
        let shift = 28 - 4 * i;
        *slot = DIGITS[((value >> shift) & 0xF) as usize];
    }
    out
}

/// Longest decimal text of a `u64` (18 446 744 073 709 551 615).
pub const U64_DIGITS: usize = 20;

/// `value` in decimal, written at the end of `buf`; returns the digits.
pub fn decimal_u64(value: u64, buf: &mut [u8; U64_DIGITS]) -> &[u8] {
    let mut v = value;
    let mut start = U64_DIGITS;
    loop {
        start -= 1;
        buf[start] = b'0' + (v % 10) as u8;
        v /= 10;
        if v == 0 {
            break;
        }
    }
    &buf[start..]
}

#[cfg(test)]
mod tests {
    use super::*;

    // Reference: Rust's own formatter (`{:#010x}` and `{}`), outside this crate.
    #[test]
    fn hex_matches_the_standard_formatter() {
        for v in [0u32, 1, 0x3f80_0000, 0xbf80_0000, 0xdead_beef, u32::MAX] {
            let expected = format!("{v:#010x}");
            assert_eq!(&hex_u32(v)[..], expected.as_bytes());
        }
    }

    #[test]
    fn decimal_matches_the_standard_formatter() {
        let mut buf = [0u8; U64_DIGITS];
        for v in [0u64, 7, 10, 40, 1_000_000, 12_345_678_901, u64::MAX] {
            let expected = v.to_string();
            assert_eq!(decimal_u64(v, &mut buf), expected.as_bytes());
        }
    }
}

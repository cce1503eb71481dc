//! Which bytes end a word.
//!
//! A word boundary is any ASCII byte that is not part of a word:
//! - whitespace and every other ASCII control byte (`0x00..=0x20` and `0x7F`), so space,
//!   tab, newline and carriage return among them;
//! - ASCII punctuation `! " # $ % & ( ) * + , . / : ; < = > ? @ [ \ ] ^ _ ` { | } ~`.
//!
//! Word bytes are letters, digits, the apostrophe `'` and the hyphen `-` (so that "don't" and
//! "well-known" stay one word), and every byte `0x80..=0xFF`, so that UTF-8 letters outside
//! ASCII are part of words.

/// The byte fed once to a fresh (or cleared) session, so that the first word has a context:
/// the training text has one message per line, so a newline is what precedes a first word.
///
/// ```
/// assert_eq!(inkling_core::session::PRIME_BYTE, b'\n');
/// ```
pub const PRIME_BYTE: u8 = b'\n';

/// Whether `byte` ends a word (see the [module docs](self) for the set).
///
/// ```
/// use inkling_core::session::is_boundary;
/// assert!(is_boundary(b' ') && is_boundary(b'\n') && is_boundary(b',') && is_boundary(b'?'));
/// assert!(!is_boundary(b'a') && !is_boundary(b'7') && !is_boundary(b'\'') && !is_boundary(b'-'));
/// assert!(!is_boundary(0xC3)); // the first byte of a two-byte UTF-8 letter
/// ```
pub const fn is_boundary(byte: u8) -> bool {
    match byte {
        b'\'' | b'-' => false,
        0x00..=0x20 | 0x7F => true,
        _ => byte.is_ascii_punctuation(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn boundary_set_is_whitespace_controls_and_punctuation_but_apostrophe_and_hyphen() {
        // The ASCII table (ANSI X3.4 / ISO 646): 0x21..=0x2F, 0x3A..=0x40, 0x5B..=0x60 and
        // 0x7B..=0x7E are the punctuation ranges; 0x00..=0x1F and 0x7F are controls.
        let punctuation = b"!\"#$%&()*+,./:;<=>?@[\\]^_`{|}~";
        for b in 0..=255u8 {
            let expected = b <= 0x20 || b == 0x7F || punctuation.contains(&b);
            assert_eq!(is_boundary(b), expected, "byte {b:#04x}");
        }
        assert_eq!(
            punctuation.len(),
            32 - 2,
            "32 ASCII punctuation marks minus ' and -"
        );
    }
}

//! Where UTF-8 characters end, so that a suggestion always ends on a whole character.
//!
//! The search extends words one byte at a time; a byte-level model may put a word boundary,
//! or the step budget may stop, in the middle of a multi-byte character. The search only
//! takes bytes that keep the text well-formed UTF-8 after what was typed (RFC 3629,
//! section 4) and only offers words whose last character is whole.

/// Whether `byte` continues a UTF-8 sequence (`10xxxxxx`).
pub(crate) const fn is_continuation(byte: u8) -> bool {
    byte & 0xC0 == 0x80
}

/// The length of the character a byte starts, or `None` for a byte that starts none
/// (a continuation byte, `C0`, `C1`, `F5`–`FF`): RFC 3629, section 4.
const fn sequence_len(lead: u8) -> Option<usize> {
    match lead {
        0x00..=0x7F => Some(1),
        0xC2..=0xDF => Some(2),
        0xE0..=0xEF => Some(3),
        0xF0..=0xF4 => Some(4),
        _ => None,
    }
}

/// The bytes allowed right after `lead`, the first continuation byte (RFC 3629, section 4:
/// no overlong forms, no surrogates, nothing above U+10FFFF).
const fn second_byte_fits(lead: u8, byte: u8) -> bool {
    match lead {
        0xE0 => matches!(byte, 0xA0..=0xBF),
        0xED => matches!(byte, 0x80..=0x9F),
        0xF0 => matches!(byte, 0x90..=0xBF),
        0xF4 => matches!(byte, 0x80..=0x8F),
        _ => is_continuation(byte),
    }
}

/// How a text ends, as far as UTF-8 goes: worked out once per beam, asked once per byte.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Tail {
    /// On a whole character (or on bytes no byte added could make whole).
    Whole,
    /// Right after the first byte of a multi-byte character, which is this byte.
    AfterLead(u8),
    /// Inside a multi-byte character, past its second byte.
    Inside,
}

impl Tail {
    /// How `text` ends.
    pub(crate) fn of(text: &[u8]) -> Tail {
        let tail = text.get(text.len().saturating_sub(4)..).unwrap_or(&[]);
        let Some(lead_at) = tail.iter().rposition(|&b| !is_continuation(b)) else {
            return Tail::Whole;
        };
        let lead = tail.get(lead_at).copied().unwrap_or(0);
        let after = tail.len() - lead_at - 1;
        match sequence_len(lead) {
            Some(len) if len > after + 1 && after == 0 => Tail::AfterLead(lead),
            Some(len) if len > after + 1 => Tail::Inside,
            _ => Tail::Whole,
        }
    }

    /// Whether the text ends on a whole character.
    pub(crate) fn is_whole(self) -> bool {
        self == Tail::Whole
    }

    /// Whether `byte` may come next: the next continuation byte of an open character, or
    /// else the start of a character.
    pub(crate) fn admits(self, byte: u8) -> bool {
        match self {
            Tail::Whole => sequence_len(byte).is_some(),
            Tail::AfterLead(lead) => second_byte_fits(lead, byte),
            Tail::Inside => is_continuation(byte),
        }
    }
}

/// Whether `text` ends on a whole character: its last multi-byte character, if any, has
/// all its continuation bytes.
pub(crate) fn ends_whole(text: &[u8]) -> bool {
    Tail::of(text).is_whole()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn agrees_with_the_standard_library_on_every_short_sequence() {
        // Reference: `core::str::from_utf8`, the standard library's UTF-8 validator. For
        // every valid text `t` and byte `b`: `t + b` is a valid prefix of some UTF-8 text
        // exactly when `Tail::of(t).admits(b)`, and `t` is valid UTF-8 exactly when it ends
        // whole.
        let mut checked = 0;
        for first in 0..=255u8 {
            for second in 0..=255u8 {
                let pair = [first, second];
                let valid_prefix = |bytes: &[u8]| match core::str::from_utf8(bytes) {
                    Ok(_) => true,
                    Err(e) => e.error_len().is_none(),
                };
                if !valid_prefix(&pair[..1]) {
                    continue;
                }
                assert_eq!(
                    ends_whole(&pair[..1]),
                    core::str::from_utf8(&pair[..1]).is_ok()
                );
                assert_eq!(
                    Tail::of(&pair[..1]).admits(second),
                    valid_prefix(&pair),
                    "{pair:02x?}"
                );
                if valid_prefix(&pair) {
                    assert_eq!(ends_whole(&pair), core::str::from_utf8(&pair).is_ok());
                    for third in [0x41, 0x80, 0x9F, 0xA0, 0xBF, 0xC3] {
                        let triple = [first, second, third];
                        assert_eq!(Tail::of(&pair).admits(third), valid_prefix(&triple));
                    }
                }
                checked += 1;
            }
        }
        assert!(checked > 20_000);
    }
}

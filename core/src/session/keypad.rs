//! 12-key entry: which letters each key of a keypad stands for.

use crate::error::Error;

/// A set of bytes (256 bits).
///
/// ```
/// use inkling_core::session::ByteSet;
/// const ABC: ByteSet = ByteSet::from_bytes(b"abc");
/// assert!(ABC.contains(b'b') && !ABC.contains(b'd'));
/// assert_eq!(ABC.iter().count(), 3);
/// ```
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct ByteSet {
    /// Bytes `0..128`, bit `b` for byte `b`.
    low: u128,
    /// Bytes `128..256`, bit `b - 128` for byte `b`.
    high: u128,
}

impl ByteSet {
    /// The empty set.
    ///
    /// ```
    /// assert!(inkling_core::session::ByteSet::EMPTY.is_empty());
    /// ```
    pub const EMPTY: ByteSet = ByteSet { low: 0, high: 0 };

    /// The set of the bytes in `bytes`.
    ///
    /// ```
    /// let digits = inkling_core::session::ByteSet::from_bytes(b"0123456789");
    /// assert!(digits.contains(b'5'));
    /// ```
    pub const fn from_bytes(bytes: &[u8]) -> Self {
        let mut set = ByteSet::EMPTY;
        let mut rest = bytes;
        while let Some((&b, tail)) = rest.split_first() {
            if b < 128 {
                set.low |= 1 << b;
            } else {
                set.high |= 1 << (b - 128);
            }
            rest = tail;
        }
        set
    }

    /// Whether `byte` is in the set.
    ///
    /// ```
    /// let set = inkling_core::session::ByteSet::from_bytes(&[0xFF]);
    /// assert!(set.contains(0xFF) && !set.contains(0x7F));
    /// ```
    pub const fn contains(&self, byte: u8) -> bool {
        if byte < 128 {
            self.low >> byte & 1 == 1
        } else {
            self.high >> (byte - 128) & 1 == 1
        }
    }

    /// Whether the set is empty.
    ///
    /// ```
    /// assert!(!inkling_core::session::ByteSet::from_bytes(b"a").is_empty());
    /// ```
    pub const fn is_empty(&self) -> bool {
        self.low == 0 && self.high == 0
    }

    /// The bytes of the set, ascending.
    ///
    /// ```
    /// let set = inkling_core::session::ByteSet::from_bytes(b"cab");
    /// assert!(set.iter().eq(*b"abc"));
    /// ```
    pub fn iter(&self) -> impl Iterator<Item = u8> + '_ {
        (0..=255u8).filter(|&b| self.contains(b))
    }
}

/// A keypad layout: for each key (named by the byte its label is, e.g. `b'2'`), the bytes it
/// stands for. Up to 12 keys. Other layouts are other data.
///
/// A key stands for each character whose UTF-8 bytes are all in its set: an ASCII letter
/// by its byte, an accented letter by its first byte and its continuation bytes (so
/// `"é".as_bytes()`, `C3 A9`, puts `é` on a key). Every character a key stands for is a
/// candidate and the model ranks them, capitals included: after "Base, this is " the keys
/// `826735` of [`KeyMap::E161`] give "Tamsel" if the model expects a name there. To force a
/// case, leave the other case out of the layout (e.g. a lower-case-only map for a
/// "lower case" mode), or type the letter in full.
///
/// ```
/// use inkling_core::session::{ByteSet, KeyMap};
/// // A two-key layout: vowels on 1, consonants on 2.
/// const TWO_KEYS: KeyMap = KeyMap::new(
///     [b'1', b'2', 0, 0, 0, 0, 0, 0, 0, 0, 0, 0],
///     [ByteSet::from_bytes(b"aeiou"), ByteSet::from_bytes(b"bcdfghjklmnpqrstvwxyz"),
///      ByteSet::EMPTY, ByteSet::EMPTY, ByteSet::EMPTY, ByteSet::EMPTY, ByteSet::EMPTY,
///      ByteSet::EMPTY, ByteSet::EMPTY, ByteSet::EMPTY, ByteSet::EMPTY, ByteSet::EMPTY],
/// );
/// assert!(TWO_KEYS.letters(b'1').is_some_and(|s| s.contains(b'e')));
/// assert!(TWO_KEYS.letters(b'3').is_none());
/// ```
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct KeyMap {
    labels: [u8; 12],
    letters: [ByteSet; 12],
}

impl KeyMap {
    /// The letter assignment of ITU-T Recommendation E.161, each letter in both cases:
    /// 2 abc, 3 def, 4 ghi, 5 jkl, 6 mno, 7 pqrs, 8 tuv, 9 wxyz; keys 1, 0, `*` and `#`
    /// carry no letters.
    ///
    /// ```
    /// use inkling_core::session::KeyMap;
    /// assert!(KeyMap::E161.letters(b'7').is_some_and(|s| s.contains(b's') && s.contains(b'S')));
    /// ```
    pub const E161: KeyMap = KeyMap::new(
        *b"1234567890*#",
        [
            ByteSet::EMPTY,
            ByteSet::from_bytes(b"abcABC"),
            ByteSet::from_bytes(b"defDEF"),
            ByteSet::from_bytes(b"ghiGHI"),
            ByteSet::from_bytes(b"jklJKL"),
            ByteSet::from_bytes(b"mnoMNO"),
            ByteSet::from_bytes(b"pqrsPQRS"),
            ByteSet::from_bytes(b"tuvTUV"),
            ByteSet::from_bytes(b"wxyzWXYZ"),
            ByteSet::EMPTY,
            ByteSet::EMPTY,
            ByteSet::EMPTY,
        ],
    );

    /// [`KeyMap::E161`] with the accented Latin-1 letters on the key of their base letter,
    /// in both cases: 2 àáâãäåç, 3 èéêë, 4 ìíîï, 6 ñòóôõöø, 7 ß, 8 ùúûü, 9 ýÿ (and the
    /// capitals). All are two bytes starting `C3`, so each key's set holds exactly these.
    ///
    /// ```
    /// use inkling_core::session::KeyMap;
    /// let six = KeyMap::E161_ACCENTED.letters(b'6').unwrap();
    /// assert!("nÑö".bytes().all(|b| six.contains(b)));
    /// ```
    pub const E161_ACCENTED: KeyMap = KeyMap::new(
        *b"1234567890*#",
        [
            ByteSet::EMPTY,
            ByteSet::from_bytes("abcABCàáâãäåçÀÁÂÃÄÅÇ".as_bytes()),
            ByteSet::from_bytes("defDEFèéêëÈÉÊË".as_bytes()),
            ByteSet::from_bytes("ghiGHIìíîïÌÍÎÏ".as_bytes()),
            ByteSet::from_bytes(b"jklJKL"),
            ByteSet::from_bytes("mnoMNOñòóôõöøÑÒÓÔÕÖØ".as_bytes()),
            ByteSet::from_bytes("pqrsPQRSß".as_bytes()),
            ByteSet::from_bytes("tuvTUVùúûüÙÚÛÜ".as_bytes()),
            ByteSet::from_bytes("wxyzWXYZýÿÝ".as_bytes()),
            ByteSet::EMPTY,
            ByteSet::EMPTY,
            ByteSet::EMPTY,
        ],
    );

    /// A layout from key labels and the bytes of each key (label `i` goes with set `i`; a
    /// label of 0 marks an unused key).
    ///
    /// ```
    /// use inkling_core::session::{ByteSet, KeyMap};
    /// let one = KeyMap::new([b'1', 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0], [ByteSet::from_bytes(b"ab"); 12]);
    /// assert!(one.letters(b'1').is_some());
    /// ```
    pub const fn new(labels: [u8; 12], letters: [ByteSet; 12]) -> Self {
        KeyMap { labels, letters }
    }

    /// The bytes of the key labelled `key`, if the layout has that key.
    ///
    /// ```
    /// use inkling_core::session::KeyMap;
    /// assert!(KeyMap::E161.letters(b'9').is_some_and(|s| s.iter().eq(*b"WXYZwxyz")));
    /// assert!(KeyMap::E161.letters(b'A').is_none());
    /// ```
    pub fn letters(&self, key: u8) -> Option<&ByteSet> {
        if key == 0 {
            return None;
        }
        self.labels
            .iter()
            .zip(self.letters.iter())
            .find_map(|(&label, set)| (label == key).then_some(set))
    }

    /// Checks that every byte of `keys` is a key of this layout that carries letters; the
    /// error [`Error::NotALetterKey`] names the first one that is not.
    ///
    /// ```
    /// use inkling_core::session::KeyMap;
    /// assert!(KeyMap::E161.check(b"43556").is_ok());
    /// assert!(KeyMap::E161.check(b"4*").is_err());
    /// ```
    pub fn check(&self, keys: &[u8]) -> Result<(), Error> {
        for (position, &byte) in keys.iter().enumerate() {
            if self.letters(byte).is_none_or(ByteSet::is_empty) {
                return Err(Error::NotALetterKey { position, byte });
            }
        }
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn e161_letters_match_the_standard() {
        // ITU-T Recommendation E.161 (02/2001), Figure 1 "Allocation of letters to the 12-key
        // keypad" (from memory): 2 ABC, 3 DEF, 4 GHI, 5 JKL, 6 MNO, 7 PQRS, 8 TUV, 9 WXYZ;
        // 1 and 0 carry no letters. Each key stands for its letters in both cases.
        let standard: [(u8, &[u8]); 12] = [
            (b'1', b""),
            (b'2', b"abc"),
            (b'3', b"def"),
            (b'4', b"ghi"),
            (b'5', b"jkl"),
            (b'6', b"mno"),
            (b'7', b"pqrs"),
            (b'8', b"tuv"),
            (b'9', b"wxyz"),
            (b'0', b""),
            (b'*', b""),
            (b'#', b""),
        ];
        for (key, letters) in standard {
            let set = KeyMap::E161.letters(key).unwrap();
            let capitals = letters.iter().map(u8::to_ascii_uppercase);
            assert!(
                set.iter().eq(capitals.chain(letters.iter().copied())),
                "key {}",
                key as char
            );
        }
        // Every letter of the Latin alphabet is on exactly one key.
        for letter in b'a'..=b'z' {
            let keys = standard.iter().filter(|(_, l)| l.contains(&letter)).count();
            assert_eq!(keys, 1, "letter {}", letter as char);
            let on = (b'0'..=b'9')
                .filter(|&k| KeyMap::E161.letters(k).unwrap().contains(letter))
                .count();
            assert_eq!(on, 1);
        }
    }

    #[test]
    fn accented_letters_sit_on_the_key_of_their_base_letter() {
        extern crate std;
        // Reference: Unicode canonical decomposition (from memory): each of these letters is
        // its base letter plus a combining mark, except ß (German sharp s, on the key of s)
        // and ø (o with stroke, on the key of o), which do not decompose. The base letter's
        // E.161 key carries it, and no other key carries it too.
        let accented = [
            ("àáâãäåç", b'2'),
            ("èéêë", b'3'),
            ("ìíîï", b'4'),
            ("ñòóôõöø", b'6'),
            ("ß", b'7'),
            ("ùúûü", b'8'),
            ("ýÿ", b'9'),
        ];
        for (letters, key) in accented {
            for c in letters
                .chars()
                .chain(letters.chars().flat_map(char::to_uppercase))
            {
                let mut buf = [0u8; 4];
                let bytes = c.encode_utf8(&mut buf).as_bytes();
                if bytes.first() != Some(&0xC3) {
                    continue; // outside Latin-1: ß's capital is "SS", ÿ's is U+0178
                }
                let on = |k: u8| {
                    KeyMap::E161_ACCENTED
                        .letters(k)
                        .is_some_and(|s| bytes.iter().all(|&b| s.contains(b)))
                };
                assert!(on(key), "{c} on {}", key as char);
                let elsewhere = (b'0'..=b'9').filter(|&k| k != key && on(k)).count();
                assert_eq!(elsewhere, 0, "{c}");
            }
        }
    }

    #[test]
    fn check_names_the_first_key_without_letters() {
        assert_eq!(KeyMap::E161.check(b"4663"), Ok(()));
        assert_eq!(
            KeyMap::E161.check(b"461"),
            Err(Error::NotALetterKey {
                position: 2,
                byte: b'1'
            })
        );
        assert_eq!(
            KeyMap::E161.check(b"x"),
            Err(Error::NotALetterKey {
                position: 0,
                byte: b'x'
            })
        );
    }
}

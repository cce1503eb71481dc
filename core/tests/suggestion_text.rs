//! What a suggestion's text may be: whole UTF-8 characters, more than the word typed, any case
//! a key or a word list allows.

use inkling_core::session::{
    KeyMap, SearchOptions, Suggestions, WordFilter, WordList, MAX_WORD_LEN,
};
use proptest::prelude::*;

mod common;
use common::{with_session, K};

/// Text of ASCII letters, spaces and letters of two, three and four bytes in UTF-8, each word
/// within [`MAX_WORD_LEN`] bytes (a longer one is refused as it is typed, by design).
fn non_ascii_text() -> impl Strategy<Value = String> {
    let chars = proptest::sample::select(vec!['a', 't', ' ', 'é', 'Ñ', 'ß', '東', '😀', 'ø']);
    proptest::collection::vec(chars, 0..12)
        .prop_map(|cs| cs.into_iter().collect::<String>())
        .prop_filter("a word longer than MAX_WORD_LEN bytes", |t| {
            t.split(' ').all(|w| w.len() <= MAX_WORD_LEN)
        })
}

/// Checks every suggestion after `typed` (the word being typed is the tail after the last
/// space): valid UTF-8 by the standard library's validator (`std::str::from_utf8`), the
/// typed word followed by at least one byte.
fn check_whole(typed: &str, found: &Suggestions<K>) -> Result<(), TestCaseError> {
    let word = typed.rsplit(' ').next().unwrap_or("").as_bytes();
    for s in &found.list {
        prop_assert!(
            std::str::from_utf8(&s.text).is_ok(),
            "{:02x?} after {:?}",
            s.text.as_slice(),
            typed
        );
        prop_assert!(s.text.starts_with(word) && s.text.len() > word.len());
    }
    Ok(())
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(150))]

    /// Whatever the text and the step budget, every suggestion ends on a whole character
    /// (and so, after a valid text, is valid UTF-8).
    #[test]
    fn a_suggestion_ends_on_a_whole_character(
        text in non_ascii_text(),
        width in 1..=K,
        max_steps in 0usize..80,
    ) {
        let options = SearchOptions { max_steps, ..SearchOptions::new(width) };
        let found = with_session(text.as_bytes(), |s| s.suggest(&options).unwrap());
        check_whole(&text, &found)?;
    }

    /// The same for 12-key entry with accented letters on the keys, and each character is
    /// one the key stands for.
    #[test]
    fn twelve_key_words_end_on_whole_characters(
        text in non_ascii_text(),
        keys in proptest::collection::vec(proptest::sample::select(&b"2345678"[..]), 1..5),
        max_steps in 0usize..80,
    ) {
        let text = format!("{text} ");
        let map = KeyMap::E161_ACCENTED;
        let options = SearchOptions { max_steps, ..SearchOptions::new(K) };
        let found = with_session(text.as_bytes(), |s| s.keys(&keys, &map, &options).unwrap());
        check_whole(&text, &found)?;
        for s in &found.list {
            let word = std::str::from_utf8(&s.text).unwrap();
            prop_assert!(word.chars().count() <= keys.len());
            for (c, &key) in word.chars().zip(&keys) {
                let mut buf = [0u8; 4];
                let set = map.letters(key).unwrap();
                prop_assert!(c.encode_utf8(&mut buf).bytes().all(|b| set.contains(b)));
            }
        }
    }
}

#[test]
fn the_word_just_taken_is_not_offered_again() {
    // Take the best suggestion after each context: the search right after it offers only
    // longer words.
    for context in ["he", "see you to", "a", "we w"] {
        let options = SearchOptions::new(K);
        with_session(context.as_bytes(), |s| {
            let first = s.suggest(&options).unwrap();
            let taken = first.list.first().expect("something offered").text.clone();
            s.push_bytes(&taken[s.word().len()..]).unwrap();
            let again = s.suggest(&options).unwrap();
            for x in &again.list {
                assert!(x.text != taken, "{taken:?} offered again after {context:?}");
                assert!(x.text.len() > taken.len());
            }
        });
    }
}

#[test]
fn twelve_key_entry_offers_capitals() {
    // The keys 8 2 6 7 3 5 (E.161: tuv abc mno pqrs def jkl) spell "Tamsel"; with that name
    // as the only word allowed, it is found, in the cases this (random) model likes best:
    // capitals are letters of the keys too. (Which case wins is the model's to say; the
    // bundled model's choice, "Tamsel", is checked through the CLI.)
    static LEXICON: &[u8] = b"Tamsel\n";
    let options = SearchOptions {
        max_steps: 10_000,
        filter: WordFilter {
            deny: WordList::EMPTY,
            lexicon: Some(WordList::new(LEXICON).unwrap()),
        },
        ..SearchOptions::new(K)
    };
    let found = with_session(b"Base, this is ", |s| {
        s.keys(b"826735", &KeyMap::E161, &options).unwrap()
    });
    assert!(!found.list.is_empty());
    for x in &found.list {
        assert!(x.text.eq_ignore_ascii_case(b"tamsel"), "{:?}", x.text);
    }
    let capitals = found.list.iter().flat_map(|x| x.text.iter());
    assert!(capitals.filter(|b| b.is_ascii_uppercase()).count() > 0);
}

#[test]
fn accented_letters_come_from_their_keys() {
    // "café" on E.161 keys 2 2 3 3, with é (C3 A9) on the key of e in the accented layout.
    static LEXICON: &[u8] = "café\n".as_bytes();
    let options = SearchOptions {
        max_steps: 10_000,
        // The tiny example model ranks the cases of "café" at random: follow every one, so
        // the check is of the key map and the lexicon, not of the ranking.
        margin: f32::INFINITY,
        filter: WordFilter {
            deny: WordList::EMPTY,
            lexicon: Some(WordList::new(LEXICON).unwrap()),
        },
        ..SearchOptions::new(K)
    };
    let found = with_session(b"a ", |s| {
        s.keys(b"2233", &KeyMap::E161_ACCENTED, &options).unwrap()
    });
    assert!(
        found
            .list
            .iter()
            .any(|x| x.text.as_slice() == "café".as_bytes()),
        "{:?}",
        found.list
    );
}

#[test]
fn a_lower_case_lexicon_lets_a_capitalised_word_through_and_a_deny_list_stops_every_case() {
    // The bundled lexicon is lower case; "Tam" at a sentence start must still be completed.
    static LEXICON: &[u8] = b"tamsel\n";
    let lexicon_only = SearchOptions {
        max_steps: 10_000,
        filter: WordFilter {
            deny: WordList::EMPTY,
            lexicon: Some(WordList::new(LEXICON).unwrap()),
        },
        ..SearchOptions::new(K)
    };
    let found = with_session(b"Tam", |s| s.suggest(&lexicon_only).unwrap());
    assert!(!found.list.is_empty());
    for x in &found.list {
        assert!(x.text.eq_ignore_ascii_case(b"tamsel"), "{:?}", x.text);
        assert!(x.text.starts_with(b"Tam"));
    }
    let denied = SearchOptions {
        filter: WordFilter {
            deny: WordList::new(LEXICON).unwrap(),
            ..lexicon_only.filter
        },
        ..lexicon_only
    };
    let none = with_session(b"Tam", |s| s.suggest(&denied).unwrap());
    assert!(none.list.is_empty(), "{:?}", none.list);
}

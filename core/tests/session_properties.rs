//! Properties of the typing session that must hold for any text and any edits.

use inkling_core::image::example::tiny_image;
use inkling_core::session::{SearchOptions, Session, Suggestions};
use inkling_core::{Model, Scratch};
use proptest::prelude::*;

const K: usize = 3;

/// One keystroke: a byte, or a backspace.
#[derive(Debug, Clone, Copy)]
enum Key {
    Byte(u8),
    Backspace,
}

fn key() -> impl Strategy<Value = Key> {
    // Letters, an apostrophe, and the boundaries space, comma, full stop and newline, with
    // backspace as often as a letter, so that edits cross word boundaries often.
    prop_oneof![
        4 => proptest::sample::select(&b"abcdeno' ,.\n"[..]).prop_map(Key::Byte),
        1 => Just(Key::Backspace),
    ]
}

/// One suggestion as comparable bits: text, score bits, finished.
type Entry = (Vec<u8>, u32, bool);

/// Suggestions as comparable bits, then steps and whether the search was cut short.
fn fingerprint(s: &Suggestions<K>) -> (Vec<Entry>, usize, bool) {
    let list = s
        .list
        .iter()
        .map(|x| (x.text.to_vec(), x.logprob.to_bits(), x.finished))
        .collect();
    (list, s.steps, s.cut_short)
}

/// Types `keys` into a fresh session, returning the text it holds and its suggestions.
fn run(keys: &[Key], options: &SearchOptions<'_>) -> (Vec<u8>, Suggestions<K>) {
    let image = tiny_image();
    let model = Model::from_bytes(&image).unwrap();
    let dims = *model.dims();
    let mut floats = vec![0.0f32; dims.session_floats(K)];
    let (mut work, mut act) = (vec![0.0f32; dims.work_len()], vec![0i16; dims.act_len()]);
    let scratch = Scratch::new(&dims, &mut work, &mut act).unwrap();
    let mut session = Session::<_, K>::new(model, &mut floats, scratch).unwrap();
    let mut text = Vec::new();
    for &k in keys {
        match k {
            Key::Byte(b) => {
                if session.push(b).is_ok() {
                    text.push(b);
                }
            }
            Key::Backspace => {
                if session.backspace().unwrap() {
                    text.pop();
                }
            }
        }
    }
    (text, session.suggest(options).unwrap())
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(200))]

    /// Backspace gives the same suggestions, bit for bit, as typing the shorter text from
    /// scratch (texts shorter than the history, so nothing is forgotten).
    #[test]
    fn backspace_equals_typing_the_shorter_text(
        keys in proptest::collection::vec(key(), 0..100),
        width in 1..=K,
        max_steps in 0usize..60,
    ) {
        let options = SearchOptions { max_steps, ..SearchOptions::new(width) };
        let (text, edited) = run(&keys, &options);
        let typed: Vec<Key> = text.iter().map(|&b| Key::Byte(b)).collect();
        let (again, fresh) = run(&typed, &options);
        prop_assert_eq!(&again, &text);
        prop_assert_eq!(fingerprint(&edited), fingerprint(&fresh));
        prop_assert!(edited.steps <= max_steps);
        prop_assert!(edited.list.len() <= width);
    }
}

//! The user memory in a typing session: learned words offered, blended as a cache model,
//! and nothing changed when no memory is given.

use inkling_core::session::{SearchOptions, Suggestions, WordFilter, WordList};
use inkling_core::user_memory::{CacheBlend, UserMemory};

mod common;
use common::{with_session, K};

fn bits(found: &Suggestions<K>) -> Vec<(Vec<u8>, u32, bool)> {
    found
        .list
        .iter()
        .map(|s| (s.text.to_vec(), s.logprob.to_bits(), s.finished))
        .collect()
}

#[test]
fn a_memory_with_no_word_of_the_prefix_changes_nothing() {
    let mut memory = UserMemory::<16>::new();
    memory.learn_text(b"zebra zone", &WordList::EMPTY);
    for context in [&b"th"[..], b"we w", b"a", b"x,y"] {
        with_session(context, |s| {
            let plain = s.suggest(&SearchOptions::new(3)).unwrap();
            for m in [UserMemory::<16>::new(), memory.clone()] {
                let options = SearchOptions {
                    memory: Some(CacheBlend::new(&m, 0.3)),
                    ..SearchOptions::new(3)
                };
                let with = s.suggest(&options).unwrap();
                assert_eq!(bits(&with), bits(&plain), "{context:?}");
                assert_eq!((with.steps, with.cut_short), (plain.steps, plain.cut_short));
            }
        });
    }
}

#[test]
fn a_name_typed_twice_is_offered_the_third_time() {
    // The simulated writer of the issue: a name unknown to the model, learned each time
    // its word ends, is offered once its first letter is typed the third time.
    let mut memory = UserMemory::<64>::new();
    let text = b"call Zorvath at the hut. then Zorvath again, ask ";
    let mut typed = Vec::new();
    for word in text.split_inclusive(|&b| b == b' ') {
        typed.extend_from_slice(word);
        memory.learn_text(word, &WordList::EMPTY);
    }
    assert_eq!(memory.count_of(b"Zorvath"), 2);
    typed.push(b'Z');
    let options = SearchOptions {
        memory: Some(CacheBlend::new(&memory, 0.3)),
        ..SearchOptions::new(3)
    };
    let found = with_session(&typed, |s| s.suggest(&options).unwrap());
    assert!(
        found.list.iter().any(|x| x.text.as_slice() == b"Zorvath"),
        "{:?}",
        found.list
    );
    let plain = with_session(&typed, |s| s.suggest(&SearchOptions::new(3)).unwrap());
    assert!(plain.list.iter().all(|x| x.text.as_slice() != b"Zorvath"));
}

#[test]
fn a_learned_word_the_search_missed_is_scored_as_the_search_scores_it() {
    // The chain rule gives one score per word: stepping a learned word's bytes must give the
    // bits the wider search gave it, and the blend must be the interpolation of Kuhn & De
    // Mori (1990) of that score with the word's share of the memory.
    let context = b"the w";
    let every = SearchOptions {
        margin: f32::INFINITY,
        ..SearchOptions::new(K)
    };
    let wide = with_session(context, |s| s.suggest(&every).unwrap());
    let target = wide
        .list
        .iter()
        .filter(|x| x.finished)
        .nth(2)
        .unwrap()
        .clone();
    let mut memory = UserMemory::<8>::new();
    memory.learn(&target.text, &WordList::EMPTY);
    memory.learn(b"wzzz", &WordList::EMPTY);
    let weight = 0.3f32;
    let narrow = SearchOptions {
        memory: Some(CacheBlend::new(&memory, weight)),
        ..SearchOptions::new(1)
    };
    let plain_one = with_session(context, |s| {
        s.suggest(&SearchOptions {
            memory: None,
            ..narrow
        })
        .unwrap()
    });
    assert_ne!(plain_one.list[0].text, target.text);
    let found = with_session(context, |s| {
        s.suggest(&SearchOptions { width: 3, ..narrow }).unwrap()
    });
    let blend = CacheBlend::new(&memory, weight);
    let entry = found.list.iter().find(|x| x.text == target.text).unwrap();
    let expected = blend.blend(target.logprob, 0.5);
    assert_eq!(entry.logprob.to_bits(), expected.to_bits());
    // By hand: (1 - 0.3) e^lp + 0.3 * 1/2.
    let by_hand = 0.7 * (target.logprob as f64).exp() + 0.15;
    assert!((f64::from(entry.logprob).exp() - by_hand).abs() < 1e-6);
    // And scored by stepping with a width of one (the search found another word).
    let one = with_session(context, |s| s.suggest(&narrow).unwrap());
    assert!(one.steps > plain_one.steps);
    let ranked: Vec<f32> = found.list.iter().map(|x| x.logprob).collect();
    assert!(ranked.windows(2).all(|w| w[0] >= w[1]));
}

#[test]
fn a_spent_budget_leaves_learned_words_at_the_cache_share() {
    let mut memory = UserMemory::<8>::new();
    memory.learn_text(b"wombat wombat wicket", &WordList::EMPTY);
    let weight = 0.4f32;
    let options = SearchOptions {
        max_steps: 0,
        memory: Some(CacheBlend::new(&memory, weight)),
        ..SearchOptions::new(3)
    };
    let found = with_session(b"w", |s| s.suggest(&options).unwrap());
    assert!(found.cut_short && found.steps == 0);
    // λ · P_cache: 0.4 · 2/3 and 0.4 · 1/3, the lower bounds of their blends.
    let share = |w: &[u8]| {
        found
            .list
            .iter()
            .find(|x| x.text.as_slice() == w)
            .unwrap()
            .logprob
    };
    assert!((share(b"wombat").exp() - 0.4 * 2.0 / 3.0).abs() < 1e-6);
    assert!((share(b"wicket").exp() - 0.4 / 3.0).abs() < 1e-6);
}

#[test]
fn denied_and_lexicon_filtered_learned_words_are_not_offered() {
    let mut memory = UserMemory::<8>::new();
    memory.learn_text(b"wombat wicket", &WordList::EMPTY);
    let deny = WordList::new(b"wombat").unwrap();
    let options = SearchOptions {
        filter: WordFilter {
            deny,
            lexicon: None,
        },
        memory: Some(CacheBlend::new(&memory, 0.9)),
        ..SearchOptions::new(3)
    };
    let found = with_session(b"w", |s| s.suggest(&options).unwrap());
    assert!(found.list.iter().all(|x| x.text.as_slice() != b"wombat"));
    assert!(found.list.iter().any(|x| x.text.as_slice() == b"wicket"));
}

#[test]
fn a_search_with_memory_in_parts_gives_what_it_gives_at_once() {
    let mut memory = UserMemory::<8>::new();
    memory.learn_text(b"wombat wicket wharf the then", &WordList::EMPTY);
    let options = SearchOptions {
        memory: Some(CacheBlend::new(&memory, 0.3)),
        ..SearchOptions::new(3)
    };
    for context in [&b"w"[..], b"the ", b"th"] {
        with_session(context, |s| {
            let whole = s.suggest(&options).unwrap();
            for part in [0, 1, 3] {
                let mut found = s.suggest_within(&options, part).unwrap();
                while s.is_refining() {
                    found = s.refine(&options, part.max(1)).unwrap();
                }
                assert_eq!(bits(&found), bits(&whole), "{context:?} in parts of {part}");
                assert_eq!(found.steps, whole.steps);
            }
        });
    }
}

/// Options with the memory's words and phrases, the cache weight 0.3 and top-k `k`.
fn with_phrases<const N: usize, const P: usize>(
    memory: &UserMemory<N, P>,
    k: usize,
) -> SearchOptions<'_> {
    SearchOptions {
        memory: Some(CacheBlend {
            top_k: k,
            ..CacheBlend::new(memory, 0.3)
        }),
        ..SearchOptions::new(3)
    }
}

#[test]
fn a_phrase_typed_twice_is_offered_whole_the_third_time() {
    let mut memory = UserMemory::<64, 16>::new();
    let line = b"Zorvath at the hut. ";
    memory.learn_text(line, &WordList::EMPTY);
    memory.learn_text(line, &WordList::EMPTY);
    let phrase = memory
        .phrases()
        .iter()
        .find(|p| p.text() == b"Zorvath at the hut")
        .unwrap();
    assert_eq!(phrase.count(), 2);
    // A k of 256 accepts every byte: the draft comes back whole, in the last place.
    let found = with_session(b"meet Zo", |s| {
        s.suggest(&with_phrases(&memory, 256)).unwrap()
    });
    let offered = found.phrase.as_ref().expect("a phrase");
    assert_eq!(offered.text.as_slice(), b"Zorvath at the hut");
    assert!(found.list.len() <= 2, "{:?}", found.list);
    // The same search in parts gives the same result.
    let parts = with_session(b"meet Zo", |s| {
        let options = with_phrases(&memory, 256);
        let mut found = s.suggest_within(&options, 1).unwrap();
        while s.is_refining() {
            found = s.refine(&options, 1).unwrap();
        }
        found
    });
    assert_eq!(parts, found);
    // Without the phrases (a memory of the same words only) the list is the plain one.
    let mut words_only = UserMemory::<64>::new();
    words_only.learn_text(line, &WordList::EMPTY);
    words_only.learn_text(line, &WordList::EMPTY);
    let options = SearchOptions {
        memory: Some(CacheBlend::new(&words_only, 0.3)),
        ..SearchOptions::new(3)
    };
    let plain = with_session(b"meet Zo", |s| s.suggest(&options).unwrap());
    assert!(plain.phrase.is_none() && plain.list.len() <= 3);
}

#[test]
fn the_draft_is_accepted_up_to_its_first_byte_outside_the_top_k() {
    // The greedy top-k acceptance rule of draft and verify (the variant of Leviathan,
    // Kalman & Matias 2023 the core documents), checked against the model's own next-byte
    // logits after each prefix of the draft, read from sessions that typed the prefix
    // (the session's scratch takes one byte a pass, so the verification rounds the state
    // after each byte as typing does: the same bits).
    let mut memory = UserMemory::<64, 16>::new();
    memory.learn_text(b"Zorvath at the hut. ", &WordList::EMPTY);
    let context = b"meet Zo";
    let rest = b"rvath at the hut";
    let ranks: Vec<usize> = (0..rest.len())
        .map(|i| {
            let mut typed = context.to_vec();
            typed.extend_from_slice(&rest[..i]);
            with_session(&typed, |s| {
                let l = s.logits();
                let own = l[rest[i] as usize];
                l.iter().filter(|&&x| x > own).count()
            })
        })
        .collect();
    // Every k that accepts a longer first part: one more than the largest rank of each
    // prefix of the draft, and the extremes.
    let mut ks: Vec<usize> = (1..=rest.len())
        .map(|i| ranks[..i].iter().max().unwrap() + 1)
        .chain([1, 256])
        .collect();
    ks.sort();
    ks.dedup();
    let mut cut_inside = 0;
    for k in ks {
        // The first drafted byte with k or more likelier bytes ends the accepted part.
        let accepted = ranks.iter().position(|&r| r >= k).unwrap_or(rest.len());
        let expected = inkling_core::session::draft::word_end_within(rest, accepted)
            .map(|end| [&context[5..], &rest[..end]].concat());
        let found = with_session(context, |s| s.suggest(&with_phrases(&memory, k)).unwrap());
        let got = found.phrase.map(|p| p.text.to_vec());
        assert_eq!(got, expected, "k {k}, ranks {ranks:?}");
        if expected
            .as_ref()
            .is_some_and(|e| e.len() < context.len() - 5 + rest.len())
        {
            cut_inside += 1;
        }
    }
    // The rule was exercised where it matters: some k stops the draft inside the phrase.
    assert!(cut_inside > 0, "ranks {ranks:?}");
}

#[test]
fn a_learned_name_is_offered_for_its_keys() {
    // ITU-T E.161 letters: Z 9, o 6, r 7, v 8, a 2, t 8, h 4. A name unknown to the model,
    // typed twice, is among the words offered for its seven keys with the memory, and a
    // learned word of other keys ("Zorvan") is not.
    use inkling_core::session::KeyMap;
    let mut memory = UserMemory::<16>::new();
    memory.learn_text(b"Zorvath Zorvan Zorvath", &WordList::EMPTY);
    let options = SearchOptions {
        memory: Some(CacheBlend::new(&memory, 0.3)),
        ..SearchOptions::new(3)
    };
    let keys = b"9678284";
    let with = with_session(b"call ", |s| s.keys(keys, &KeyMap::E161, &options).unwrap());
    assert!(
        with.list.iter().any(|x| x.text.as_slice() == b"Zorvath"),
        "{:?}",
        with.list
    );
    assert!(with.list.iter().all(|x| x.text.as_slice() != b"Zorvan"));
    assert!(with.phrase.is_none());
    let plain = with_session(b"call ", |s| {
        s.keys(keys, &KeyMap::E161, &SearchOptions::new(3)).unwrap()
    });
    assert!(plain.list.iter().all(|x| x.text.as_slice() != b"Zorvath"));
}

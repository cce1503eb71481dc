//! Completion by beam search over bytes, in `K` caller-owned beam states.
//!
//! From the state after the text typed so far, each round scores every one-byte extension
//! of every beam (score = sum of natural-log probabilities, see [`LogSoftmax`]):
//! - a word boundary byte finishes the beam's word: it goes, with the boundary's probability
//!   included, to a separate list of the `width` best finished words (distinct texts; the
//!   best boundary counts);
//! - any other byte is a candidate; the `width` best candidates become the next beams and
//!   each is stepped once through the model.
//!
//! A word is offered only if it adds at least one byte to the word typed (the word as typed
//! saves no keystroke) and ends on a whole UTF-8 character; a byte is a candidate only if it
//! keeps the word well-formed UTF-8 (see `utf8_tail`), so no beam is spent on a byte
//! sequence that could never be offered.
//!
//! A candidate no better than the worst of a full finished list is dropped: scores only fall
//! as words grow, so it could never finish better. The search ends when no candidate is
//! left, or when the step budget is spent (then the unstepped beams are still reported as
//! unfinished). Words never exceed [`MAX_WORD_LEN`]: a beam at that length may only end.
//!
//! Only `width` beam states are needed, not one per candidate: after choosing the best
//! (beam, byte) pairs, the first child of each parent takes over its parent's slot and the
//! other children copy the parent's state into slots freed by parents with no child
//! chosen. Every copy is made before any step, since a step overwrites its slot.

use super::beam_slots::Slots;
use super::keypad::KeyMap;
use super::log_softmax::LogSoftmax;
use super::suggestion::{SearchOptions, Suggestion, Suggestions};
use super::utf8_tail::{self, is_continuation, Tail};
use super::word_boundary::is_boundary;
use super::word_buffer::{Word, MAX_WORD_LEN};
use crate::engine::buffers::Scratch;
use crate::engine::weights::Weights;
use crate::error::Error;

/// What the searched words look like after the bytes already typed.
#[derive(Debug, Clone, Copy)]
pub(crate) enum Shape<'k> {
    /// Any word bytes.
    Free,
    /// One character of each key in turn, then the end of the word. A key stands for the
    /// characters whose bytes are all in its set (a multi-byte character: its first byte
    /// and its continuation bytes).
    Keys {
        /// The layout.
        map: &'k KeyMap,
        /// The keys pressed (checked against `map`).
        keys: &'k [u8],
    },
}

impl Shape<'_> {
    /// Whether word byte `byte` may follow a completion that has started `started`
    /// characters.
    fn allows(&self, started: usize, byte: u8) -> bool {
        match self {
            Shape::Free => true,
            Shape::Keys { map, keys } => {
                // A continuation byte belongs to the key of the character it continues.
                let key = if is_continuation(byte) {
                    started.checked_sub(1)
                } else {
                    Some(started)
                };
                key.and_then(|k| keys.get(k))
                    .and_then(|&k| map.letters(k))
                    .is_some_and(|set| set.contains(byte))
            }
        }
    }

    /// Whether the word may end after a completion that has started `started` characters.
    fn may_end(&self, started: usize) -> bool {
        match self {
            Shape::Free => started > 0,
            Shape::Keys { keys, .. } => started == keys.len(),
        }
    }
}

/// How many characters `bytes` starts (its bytes that are not UTF-8 continuation bytes).
fn characters_started(bytes: &[u8]) -> usize {
    bytes.iter().filter(|&&b| !is_continuation(b)).count()
}

/// Where the search starts: the state after the text so far, the logits after it and the
/// bytes of the word typed so far.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Root<'r> {
    pub(crate) state: &'r [f32],
    pub(crate) logits: &'r [f32],
    pub(crate) word: &'r [u8],
}

/// A live beam: its word, its score and the slot holding its state and next-byte logits.
#[derive(Debug, Clone)]
pub(crate) struct Beam {
    text: Word,
    score: f32,
    slot: usize,
}

/// A one-byte extension of beam `parent` (an index into the beams of the round).
#[derive(Debug, Clone, Copy)]
pub(crate) struct Candidate {
    parent: usize,
    byte: u8,
    score: f32,
}

/// Runs the search with `options.width <= K` beams held in `slots` (at least `K` of them).
pub(crate) fn search<W: Weights + ?Sized, const K: usize>(
    weights: &W,
    scratch: &mut Scratch<'_>,
    slots: &mut Slots<'_>,
    root: Root<'_>,
    shape: Shape<'_>,
    options: &SearchOptions<'_>,
) -> Result<Suggestions<K>, Error> {
    let width = options.width;
    if width > K {
        return Err(Error::CapacityExceeded {
            buffer: "beams",
            capacity: K,
        });
    }
    let mut out = Suggestions::<K>::default();
    let text = Word::from_slice(root.word).map_err(|_| Error::CapacityExceeded {
        buffer: "word",
        capacity: MAX_WORD_LEN,
    })?;
    if width == 0 {
        return Ok(out);
    }
    slots.load(0, root.state, root.logits);
    let mut beams: heapless::Vec<Beam, K> = heapless::Vec::new();
    let _ = beams.push(Beam {
        text,
        score: 0.0,
        slot: 0,
    });
    let prefix = root.word.len();

    while !beams.is_empty() {
        let candidates = extend(&beams, slots, shape, options, prefix, &mut out.list);
        beams = assign_slots(&beams, &candidates, slots);
        for (beam, candidate) in beams.iter().zip(candidates.iter()) {
            if out.steps >= options.max_steps {
                out.cut_short = true;
                break;
            }
            slots.step(beam.slot, weights, scratch, candidate.byte)?;
            out.steps += 1;
        }
        if out.cut_short {
            break;
        }
    }

    // Too few finished words: the best beams the budget stopped, flagged unfinished.
    for beam in &beams {
        if out.list.len() >= width {
            break;
        }
        let seen = out.list.iter().any(|s| s.text == beam.text);
        if !seen && utf8_tail::ends_whole(&beam.text) && options.filter.offers(&beam.text) {
            let _ = out.list.push(Suggestion {
                text: beam.text.clone(),
                logprob: beam.score,
                finished: false,
            });
        }
    }
    Ok(out)
}

/// One round: scores every one-byte extension of every beam, offers the finished ones to
/// `finished` and returns the best `width` unfinished ones, best first.
fn extend<const K: usize>(
    beams: &[Beam],
    slots: &Slots<'_>,
    shape: Shape<'_>,
    options: &SearchOptions<'_>,
    prefix: usize,
    finished: &mut heapless::Vec<Suggestion, K>,
) -> heapless::Vec<Candidate, K> {
    let width = options.width;
    let mut candidates: heapless::Vec<Candidate, K> = heapless::Vec::new();
    for (parent, beam) in beams.iter().enumerate() {
        let logits = slots.logits(beam.slot);
        let norm = LogSoftmax::of(logits);
        // What the bytes so far allow, worked out once per beam rather than per byte.
        let started = characters_started(beam.text.get(prefix..).unwrap_or(&[]));
        let tail = Tail::of(&beam.text);
        for (byte, &logit) in (0..=255u8).zip(logits) {
            let score = beam.score + norm.log_prob(logit);
            if !score.is_finite() || !beats_worst(finished, width, score, |s| s.logprob) {
                continue;
            }
            if is_boundary(byte) {
                if shape.may_end(started) && tail.is_whole() && options.filter.offers(&beam.text) {
                    offer_finished(finished, width, &beam.text, score);
                }
            } else if !beam.text.is_full()
                && tail.admits(byte)
                && shape.allows(started, byte)
                && beats_worst(&candidates, width, score, |c| c.score)
            {
                let mut text = beam.text.clone();
                let _ = text.push(byte);
                if options.filter.may_extend(&text) {
                    insert_ranked(
                        &mut candidates,
                        width,
                        Candidate {
                            parent,
                            byte,
                            score,
                        },
                        |c| c.score,
                    );
                }
            }
        }
    }
    candidates
}

/// The beams of the next round, one per candidate (same order), with their slots assigned
/// and parent states copied where a parent has several children.
fn assign_slots<const K: usize>(
    beams: &[Beam],
    candidates: &[Candidate],
    slots: &mut Slots<'_>,
) -> heapless::Vec<Beam, K> {
    let mut has_child = [false; K];
    for c in candidates {
        if let Some(flag) = has_child.get_mut(c.parent) {
            *flag = true;
        }
    }
    // A slot is busy if its beam has a child (that child inherits it).
    let mut busy = [false; K];
    for (beam, _) in beams.iter().zip(has_child).filter(|(_, child)| *child) {
        if let Some(flag) = busy.get_mut(beam.slot) {
            *flag = true;
        }
    }
    let mut inherited = [false; K];
    let mut next: heapless::Vec<Beam, K> = heapless::Vec::new();
    for c in candidates {
        let Some(parent) = beams.get(c.parent) else {
            continue;
        };
        let first_child = inherited
            .get_mut(c.parent)
            .map(|flag| !core::mem::replace(flag, true))
            .unwrap_or(false);
        let slot = if first_child {
            parent.slot
        } else {
            // There are at most K children and each parent with a child keeps one slot, so
            // a free slot always exists.
            let Some(free) = busy.iter().position(|b| !b) else {
                continue;
            };
            if let Some(flag) = busy.get_mut(free) {
                *flag = true;
            }
            slots.copy_state(parent.slot, free);
            free
        };
        let mut text = parent.text.clone();
        let _ = text.push(c.byte);
        let _ = next.push(Beam {
            text,
            score: c.score,
            slot,
        });
    }
    next
}

/// Whether `score` would enter a ranked list of at most `width` entries.
fn beats_worst<T>(list: &[T], width: usize, score: f32, score_of: impl Fn(&T) -> f32) -> bool {
    list.len() < width || list.last().is_some_and(|worst| score > score_of(worst))
}

/// Inserts `item` into a list kept best first with at most `width` entries; among equal
/// scores the earlier one stays first.
fn insert_ranked<T, const K: usize>(
    list: &mut heapless::Vec<T, K>,
    width: usize,
    item: T,
    score_of: impl Fn(&T) -> f32,
) {
    let score = score_of(&item);
    let at = list
        .iter()
        .position(|x| score_of(x) < score)
        .unwrap_or(list.len());
    if at >= width {
        return;
    }
    if list.len() >= width {
        list.pop();
    }
    let _ = list.insert(at, item);
}

/// Offers a finished word: a text already listed keeps its better score.
fn offer_finished<const K: usize>(
    list: &mut heapless::Vec<Suggestion, K>,
    width: usize,
    text: &Word,
    score: f32,
) {
    if let Some(i) = list.iter().position(|s| s.text == *text) {
        if list.get(i).is_some_and(|s| s.logprob >= score) {
            return;
        }
        list.remove(i);
    }
    let suggestion = Suggestion {
        text: text.clone(),
        logprob: score,
        finished: true,
    };
    insert_ranked(list, width, suggestion, |s| s.logprob);
}

#[cfg(test)]
mod tests {
    use crate::engine::buffers::Scratch;
    use crate::engine::recurrence::step;
    use crate::image::example::tiny_image;
    use crate::session::{is_boundary, SearchOptions, Session, Suggestion, PRIME_BYTE};
    use crate::Model;

    /// The log-probability of `text` after `context`, by the chain rule
    /// `log p(x_1..x_n) = Σ log p(x_i | x_<i)`, with log-softmax evaluated in f64 from its
    /// definition on a fresh state; a finished word adds its most likely boundary byte.
    fn chain_rule_logprob(model: &Model<'_>, context: &[u8], s: &Suggestion) -> f64 {
        let dims = *model.dims();
        let mut state = [0.0f32; 512];
        let state = &mut state[..dims.state_len()];
        let (mut work, mut act) = ([0.0f32; 512], [0i16; 64]);
        let mut scratch = Scratch::new(&dims, &mut work, &mut act).unwrap();
        let mut logits = [0.0f32; 256];
        let mut feed = |b: u8, logits: &mut [f32; 256]| {
            logits.copy_from_slice(step(model, state, &mut scratch, b).unwrap());
        };
        feed(PRIME_BYTE, &mut logits);
        let word_start = context
            .iter()
            .rposition(|&b| is_boundary(b))
            .map_or(0, |p| p + 1);
        for &b in context {
            feed(b, &mut logits);
        }
        let log_p = |logits: &[f32; 256], b: u8| {
            let sum: f64 = logits.iter().map(|&l| (l as f64).exp()).sum();
            (logits[b as usize] as f64) - sum.ln()
        };
        let typed = context.len() - word_start;
        let mut total = 0.0;
        for &b in &s.text[typed..] {
            total += log_p(&logits, b);
            feed(b, &mut logits);
        }
        if s.finished {
            total += (0..=255u8)
                .filter(|&b| is_boundary(b))
                .map(|b| log_p(&logits, b))
                .fold(f64::NEG_INFINITY, f64::max);
        }
        total
    }

    #[test]
    fn scores_follow_the_chain_rule_and_results_are_ranked_and_distinct() {
        let image = tiny_image();
        let model = Model::from_bytes(&image).unwrap();
        let dims = *model.dims();
        for context in [&b""[..], b"a", b"the ", b"we w", b"x,y"] {
            let mut floats = [0.0f32; 4096];
            let (mut work, mut act) = ([0.0f32; 512], [0i16; 64]);
            let scratch = Scratch::new(&dims, &mut work, &mut act).unwrap();
            let mut session = Session::<_, 6>::new(model, &mut floats, scratch).unwrap();
            session.push_bytes(context).unwrap();
            let found = session.suggest(&SearchOptions::new(6)).unwrap();
            assert!(!found.list.is_empty());
            for s in &found.list {
                let expected = chain_rule_logprob(&model, context, s);
                assert!(
                    (s.logprob as f64 - expected).abs() < 1e-4,
                    "{:?} after {:?}: {} vs {}",
                    s.text,
                    context,
                    s.logprob,
                    expected
                );
            }
            let finished: heapless::Vec<f32, 6> = found
                .list
                .iter()
                .filter(|s| s.finished)
                .map(|s| s.logprob)
                .collect();
            assert!(finished.windows(2).all(|w| w[0] >= w[1]));
            assert!(found
                .list
                .iter()
                .skip_while(|s| s.finished)
                .all(|s| !s.finished));
            for (i, a) in found.list.iter().enumerate() {
                assert!(found.list.iter().skip(i + 1).all(|b| b.text != a.text));
            }
        }
    }
}

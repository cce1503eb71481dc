//! Completion by beam search over bytes, in `K` caller-owned beam states.
//!
//! From the state after the text typed so far, each round steps every beam once through the
//! model (the root, the text itself, needs no step) and at once scores every one-byte
//! extension of it (score = sum of natural-log probabilities, see [`LogSoftmax`]):
//! - a word boundary byte finishes the beam's word: it goes, with the boundary's probability
//!   included, to a separate list of the `width` best finished words (distinct texts; the
//!   best boundary counts);
//! - any other byte is a candidate; the `width` best candidates become the next beams.
//!
//! A word is offered only if it adds at least one byte to the word typed (the word as typed
//! saves no keystroke) and ends on a whole UTF-8 character; a byte is a candidate only if it
//! keeps the word well-formed UTF-8 (see `utf8_tail`), so no beam is spent on a byte
//! sequence that could never be offered.
//!
//! Scores only fall as words grow, so a word that can no longer enter the results is never
//! stepped: a candidate (or a beam, checked again just before its step) must beat the worst
//! of a full finished list. Besides, the search keeps only what is likely enough to be
//! worth a step ([`SearchOptions::margin`]): a candidate more than the margin below the best
//! candidate of its round, or below the best finished word, is dropped. The search ends when
//! no candidate is left, or when the step budget is spent (then the beams not yet stepped are
//! still reported as unfinished). Words never exceed [`MAX_WORD_LEN`]: a beam at that length
//! may only end.
//!
//! Case variants of one word (`Tamsel`, `tamsel`) are different texts with different
//! states, but a second case of a likelier word counts `SECOND_CASE_COST` (1.5 nats) less
//! when it would take a beam from a different word, so the beams hold different words
//! unless a second case is much likelier (on 12-key entry each key stands for its letters in
//! both cases).
//!
//! Only `width` beam states are needed, not one per candidate, and no logits are kept: after
//! choosing the best (beam, byte) pairs, the first child of each parent takes over its
//! parent's slot and the other children copy the parent's state into slots freed by parents
//! with no child chosen (the root's state is never written: its children get copies). Every
//! copy is made before any step of the round, since a step overwrites its slot.
//!
//! With a user memory ([`SearchOptions::memory`]), the learned words that start with the
//! word typed (on 12-key entry, those whose rest fits the keys, which are then the whole
//! cache) are blended in as a cache model once the rounds end; those the search did
//! not finish are scored by stepping their remaining bytes in the first beam slot, within
//! the same step budget (see [`cache_blend`](crate::user_memory::cache_blend)).

use super::beam_slots::Slots;
use super::draft::{choose_draft, in_top_k, word_end_within, Draft, Phrase};
use super::keypad::KeyMap;
use super::log_softmax::LogSoftmax;
use super::suggestion::{SearchOptions, Suggestion, Suggestions};
use super::utf8_tail::{self, is_continuation, Tail};
use super::word_boundary::is_boundary;
use super::word_buffer::{Word, MAX_WORD_LEN};
use crate::engine::buffers::Scratch;
use crate::engine::weights::Weights;
use crate::error::Error;
use crate::user_memory::{CacheBlend, MAX_PHRASE_LEN};

/// What the searched words look like after the bytes already typed.
#[derive(Debug, Clone, Copy)]
pub(crate) enum Shape<'k> {
    /// Any word bytes.
    Free,
    /// One letter of each key in turn, then the end of the word.
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

    /// Whether a whole completion `rest` (the bytes after the word typed) has this shape.
    fn fits(&self, rest: &[u8]) -> bool {
        let mut started = 0usize;
        for &b in rest {
            if !self.allows(started, b) {
                return false;
            }
            if !is_continuation(b) {
                started += 1;
            }
        }
        self.may_end(started)
    }
}

/// How many characters `bytes` starts (its bytes that are not UTF-8 continuation bytes).
fn characters_started(bytes: &[u8]) -> usize {
    bytes.iter().filter(|&&b| !is_continuation(b)).count()
}

/// Where the search starts: the logits after the text so far and the bytes of the word typed
/// so far (the slot of its state, never written, is given to [`Search::start`]).
#[derive(Debug, Clone, Copy)]
pub(crate) struct Root<'r> {
    pub(crate) logits: &'r [f32],
    pub(crate) word: &'r [u8],
}

/// A live beam: its word, its score and the slot holding its state. Every beam but the root
/// holds its parent's state until it is stepped with its last byte.
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

/// A learned word a search offers from the user memory, with its model score once known.
#[derive(Debug, Clone)]
pub(crate) struct LearnedCandidate {
    text: Word,
    count: u16,
    last_used: u32,
    /// The model's natural-log probability of the rest of the word and a boundary: the sum
    /// so far while `stepped` bytes of the rest have been fed.
    logprob: f32,
    /// Bytes of the rest of the word fed through the model so far.
    stepped: usize,
    /// Whether `logprob` is complete.
    scored: bool,
}

/// A search in progress, kept between calls so that it can run in parts: the beams of the
/// round not yet stepped, the parents and candidates of the round so far, the results and
/// the beams the step budget stopped. Running it in parts gives exactly what running it at
/// once does.
#[derive(Debug, Clone, Default)]
pub(crate) struct Search<const K: usize> {
    pending: heapless::Vec<Beam, K>,
    next: usize,
    parents: heapless::Vec<Beam, K>,
    candidates: heapless::Vec<Candidate, K>,
    out: Suggestions<K>,
    stopped: heapless::Vec<Beam, K>,
    /// Whether the round of the root (which needs no step) is still to run.
    at_root: bool,
    /// Whether the search has more to do (false for a search never started).
    running: bool,
    /// Whether the rounds of beams have ended (what is left is scoring learned words).
    beams_done: bool,
    /// The slot of the root's state.
    root_slot: usize,
    /// The learned words offered, the `width` most frequent that start with the word typed
    /// (empty without a memory).
    learned: heapless::Vec<LearnedCandidate, K>,
    /// The learned word being scored.
    learned_next: usize,
    /// `Σ c(v)` over the learned words that start with the word typed: 0 means no blend.
    cache_total: u32,
    /// The phrase draft still to verify (see [`draft`](super::draft)).
    draft: Option<Draft>,
    /// The phrase the verification accepted.
    phrase: Option<Phrase>,
}

impl<const K: usize> Search<K> {
    /// A search from the word typed so far, whose state is in `root_slot`, with
    /// `options.width <= K` beams; `before` is the text before the word (its end is the
    /// context of a phrase draft).
    pub(crate) fn start(
        word: &[u8],
        before: &[u8],
        root_slot: usize,
        shape: Shape<'_>,
        options: &SearchOptions<'_>,
    ) -> Result<Self, Error> {
        if options.width > K {
            return Err(Error::CapacityExceeded {
                buffer: "beams",
                capacity: K,
            });
        }
        let text = Word::from_slice(word).map_err(|_| Error::CapacityExceeded {
            buffer: "word",
            capacity: MAX_WORD_LEN,
        })?;
        let mut search = Search {
            at_root: true,
            running: options.width > 0,
            root_slot,
            ..Search::default()
        };
        if let Some(blend) = &options.memory {
            search.learned = learned_candidates(blend, word, shape, options);
            match shape {
                Shape::Free => {
                    search.cache_total = blend.prefix_total(word);
                    if search.running {
                        search.draft = choose_draft(blend.phrases, before, word);
                    }
                }
                // On 12-key entry the cache is the learned words that fit the keys, and no
                // phrase is drafted.
                Shape::Keys { .. } => {
                    search.cache_total = blend
                        .words
                        .iter()
                        .filter(|w| fits_after(w.text(), word, shape))
                        .map(|w| u32::from(w.count()))
                        .sum();
                }
            }
        }
        let _ = search.pending.push(Beam {
            text,
            score: 0.0,
            slot: root_slot,
        });
        Ok(search)
    }

    /// Whether the search has more to do.
    pub(crate) fn is_running(&self) -> bool {
        self.running
    }

    /// Runs at most `budget` more engine steps (the whole search stays within
    /// `options.max_steps`), with the beams' states in the `K` slots from `first_beam` on.
    /// The same `root`, `shape` and `options` must be given at every call.
    #[allow(clippy::too_many_arguments)]
    pub(crate) fn run<W: Weights + ?Sized>(
        &mut self,
        weights: &W,
        scratch: &mut Scratch<'_>,
        slots: &mut Slots<'_>,
        root: Root<'_>,
        first_beam: usize,
        shape: Shape<'_>,
        options: &SearchOptions<'_>,
        budget: usize,
    ) -> Result<(), Error> {
        let prefix = root.word.len();
        let mut taken = 0usize;
        while self.running && !self.beams_done {
            // Each beam is stepped and its extensions scored at once, so no beam keeps
            // logits; a beam that can no longer finish among the results is dropped unstepped.
            while let Some(beam) = self.pending.get(self.next).cloned() {
                let logits = if self.at_root {
                    root.logits
                } else if !is_open(&self.out.list, options, beam.score) {
                    self.next += 1;
                    continue;
                } else if self.out.steps >= options.max_steps {
                    self.out.cut_short = true;
                    let _ = self.stopped.push(beam);
                    self.next += 1;
                    continue;
                } else if taken >= budget {
                    return Ok(());
                } else {
                    let byte = beam.text.last().copied().unwrap_or(0);
                    self.out.steps += 1;
                    taken += 1;
                    slots.feed(beam.slot, weights, scratch, &[byte])?
                };
                let parent = self.parents.len();
                // What the bytes so far allow, worked out once per beam rather than per byte.
                let started = characters_started(beam.text.get(prefix..).unwrap_or(&[]));
                extend(
                    &beam,
                    &self.parents,
                    parent,
                    logits,
                    started,
                    shape,
                    options,
                    &mut self.out.list,
                    &mut self.candidates,
                );
                let _ = self.parents.push(beam);
                self.next += 1;
            }
            self.at_root = false;
            let best = self
                .candidates
                .first()
                .map_or(f32::NEG_INFINITY, |c| c.score);
            // On 12-key entry a likely prefix says less of the word of exactly the keys'
            // length, so there the margin to the round's best is wider.
            let round_margin = match shape {
                Shape::Free => options.margin,
                Shape::Keys { .. } => KEYS_MARGIN_FACTOR * options.margin,
            };
            let list = &self.out.list;
            self.candidates
                .retain(|c| c.score >= best - round_margin && is_open(list, options, c.score));
            if self.out.cut_short || self.candidates.is_empty() {
                self.end_rounds(root.logits, prefix);
                break;
            }
            self.pending = assign_slots(&self.parents, &self.candidates, slots, first_beam);
            self.next = 0;
            self.parents.clear();
            self.candidates.clear();
        }
        if self.running {
            let taken = self.score_learned(
                weights, scratch, slots, prefix, first_beam, options, budget, taken,
            )?;
            if let Some(taken) = taken {
                self.verify_draft(
                    weights,
                    scratch,
                    slots,
                    root.logits,
                    first_beam,
                    options,
                    budget,
                    taken,
                )?;
            }
        }
        Ok(())
    }

    /// Verifies the phrase draft (see [`draft`](super::draft)) on a copy of the root's
    /// state in the first beam slot, once the word search is done; waits for the next call
    /// when this one has taken steps and the draft would pass its `budget`.
    #[allow(clippy::too_many_arguments)]
    fn verify_draft<W: Weights + ?Sized>(
        &mut self,
        weights: &W,
        scratch: &mut Scratch<'_>,
        slots: &mut Slots<'_>,
        root_logits: &[f32],
        first_beam: usize,
        options: &SearchOptions<'_>,
        budget: usize,
        taken: usize,
    ) -> Result<(), Error> {
        let (Some(draft), Some(blend)) = (self.draft.take(), options.memory) else {
            self.running = false;
            return Ok(());
        };
        let whole = draft.rest();
        // The first drafted byte is checked on the root's logits; each further one is fed.
        let left = options.max_steps.saturating_sub(self.out.steps);
        let rest = whole.get(..whole.len().min(left + 1)).unwrap_or(&[]);
        let feed = rest.len().saturating_sub(1);
        if taken > 0 && taken + feed > budget {
            self.draft = Some(draft);
            return Ok(());
        }
        self.out.cut_short |= rest.len() < whole.len();
        let k = blend.top_k;
        let mut logprobs = [0.0f32; MAX_PHRASE_LEN];
        let mut accepted = 0usize;
        let log_prob = |logits: &[f32], byte: u8| {
            let norm = LogSoftmax::of(logits);
            logits
                .get(usize::from(byte))
                .map_or(f32::NEG_INFINITY, |&l| norm.log_prob(l))
        };
        if let Some(&first) = rest.first() {
            if in_top_k(root_logits, first, k) {
                if let Some(lp) = logprobs.first_mut() {
                    *lp = log_prob(root_logits, first);
                }
                accepted = 1;
            }
        }
        if accepted == 1 && feed > 0 {
            slots.copy_state(self.root_slot, first_beam);
            let fed = slots.check(
                first_beam,
                weights,
                scratch,
                rest.get(..feed).unwrap_or(&[]),
                |i, logits| {
                    let Some(&next) = rest.get(i + 1) else {
                        return false;
                    };
                    if !in_top_k(logits, next, k) {
                        return false;
                    }
                    if let Some(lp) = logprobs.get_mut(i + 1) {
                        *lp = log_prob(logits, next);
                    }
                    accepted = i + 2;
                    true
                },
            )?;
            self.out.steps += fed;
        }
        if let Some(end) = word_end_within(rest, accepted) {
            let logprob = logprobs.get(..end).unwrap_or(&[]).iter().sum();
            self.phrase = Some(draft.phrase(end, logprob));
        }
        self.running = false;
        Ok(())
    }

    /// The rounds of beams have ended: learned words the search finished take its score,
    /// the others start from the root's logits (their first byte needs no step); the search
    /// goes on only if some are left to score and the step budget is not spent.
    fn end_rounds(&mut self, root_logits: &[f32], prefix: usize) {
        self.beams_done = true;
        let norm = LogSoftmax::of(root_logits);
        for learned in self.learned.iter_mut() {
            if let Some(found) = self.out.list.iter().find(|s| s.text == learned.text) {
                learned.logprob = found.logprob;
                learned.scored = true;
            } else {
                let first = learned.text.get(prefix).copied().unwrap_or(0);
                let logit = root_logits.get(usize::from(first)).copied();
                learned.logprob = logit.map_or(f32::NEG_INFINITY, |l| norm.log_prob(l));
            }
        }
        self.running =
            !self.out.cut_short && (self.learned.iter().any(|l| !l.scored) || self.draft.is_some());
    }

    /// Scores the learned words left, one engine step per byte of their rest, in the first
    /// beam slot (free once the rounds have ended), within `budget` more steps and
    /// `options.max_steps` in all. Returns the steps taken in this call once every learned
    /// word is scored, `None` if it stopped before.
    #[allow(clippy::too_many_arguments)]
    fn score_learned<W: Weights + ?Sized>(
        &mut self,
        weights: &W,
        scratch: &mut Scratch<'_>,
        slots: &mut Slots<'_>,
        prefix: usize,
        first_beam: usize,
        options: &SearchOptions<'_>,
        budget: usize,
        mut taken: usize,
    ) -> Result<Option<usize>, Error> {
        while self.learned_next < self.learned.len() {
            let floor = self.floor(options, self.learned_next);
            let Some(learned) = self.learned.get_mut(self.learned_next) else {
                break;
            };
            let rest = learned.text.get(prefix..).unwrap_or(&[]);
            if learned.scored || rest.is_empty() {
                self.learned_next += 1;
                continue;
            }
            // The sum so far bounds the word's model score from above (every byte more
            // adds a log-probability <= 0): a word whose best blend cannot reach the results
            // is not stepped further, and counts as unscored.
            let upper = options.memory.map_or(f32::INFINITY, |blend| {
                blend.blend(
                    learned.logprob,
                    f32::from(learned.count) / self.cache_total as f32,
                )
            });
            if upper < floor {
                learned.logprob = f32::NEG_INFINITY;
                learned.scored = true;
                self.learned_next += 1;
                continue;
            }
            if self.out.steps >= options.max_steps {
                self.out.cut_short = true;
                self.running = false;
                return Ok(None);
            }
            if taken >= budget {
                return Ok(None);
            }
            if learned.stepped == 0 {
                slots.copy_state(self.root_slot, first_beam);
            }
            let byte = rest.get(learned.stepped).copied().unwrap_or(0);
            self.out.steps += 1;
            taken += 1;
            let logits = slots.feed(first_beam, weights, scratch, &[byte])?;
            let norm = LogSoftmax::of(logits);
            learned.stepped += 1;
            learned.logprob += match rest.get(learned.stepped) {
                Some(&next) => logits
                    .get(usize::from(next))
                    .map_or(f32::NEG_INFINITY, |&l| norm.log_prob(l)),
                None => (0..=255u8)
                    .zip(logits)
                    .filter(|&(b, _)| is_boundary(b))
                    .map(|(_, &l)| norm.log_prob(l))
                    .fold(f32::NEG_INFINITY, f32::max),
            };
            if learned.stepped == rest.len() {
                learned.scored = true;
                self.learned_next += 1;
            }
        }
        Ok(Some(taken))
    }

    /// The lowest blend a word needs to enter the results: the `width`-th best of what the
    /// others are sure to get (the model's finished words and the learned words scored, or
    /// for a learned word not yet scored its smallest blend, `λ · P_cache`), leaving out the
    /// learned word `skip`; `−∞` while fewer than `width` are known.
    fn floor(&self, options: &SearchOptions<'_>, skip: usize) -> f32 {
        let Some(blend) = &options.memory else {
            return f32::NEG_INFINITY;
        };
        let total = self.cache_total as f32;
        let mut best: heapless::Vec<f32, K> = heapless::Vec::new();
        let mut add = |value: f32| insert_ranked(&mut best, options.width, value, |&v| v);
        for s in self.out.list.iter().filter(|s| s.finished) {
            if !self.learned.iter().any(|l| l.text == s.text) {
                let count = crate::user_memory::learned_words::count_in(blend.words, &s.text);
                add(blend.blend(s.logprob, f32::from(count) / total));
            }
        }
        for (i, l) in self.learned.iter().enumerate() {
            if i != skip {
                let model = if l.scored {
                    l.logprob
                } else {
                    f32::NEG_INFINITY
                };
                add(blend.blend(model, f32::from(l.count) / total));
            }
        }
        if best.len() < options.width {
            return f32::NEG_INFINITY;
        }
        best.last().copied().unwrap_or(f32::NEG_INFINITY)
    }

    /// The results so far, best first: the finished words, then (if the search has not
    /// ended, or its step budget stopped it) as many of the best beams not yet stepped as fit,
    /// flagged unfinished.
    pub(crate) fn result(&self, options: &SearchOptions<'_>) -> Suggestions<K> {
        let plain = self.model_result(options);
        let mut out = match &options.memory {
            Some(blend) if self.cache_total > 0 => self.blended(plain, blend, options.width),
            _ => plain,
        };
        // A phrase takes the last of the `width` places (see `draft`).
        if let Some(phrase) = &self.phrase {
            out.list.truncate(options.width.saturating_sub(1));
            out.phrase = Some(phrase.clone());
        }
        out
    }

    /// The results ranked by the cache model: the model's finished words and the learned
    /// words by their blended probability, then the model's unfinished beams if room is
    /// left. Every `logprob` is the natural log of the blend.
    fn blended(
        &self,
        plain: Suggestions<K>,
        blend: &CacheBlend<'_>,
        width: usize,
    ) -> Suggestions<K> {
        let total = self.cache_total as f32;
        let cache = |text: &[u8]| {
            f32::from(crate::user_memory::learned_words::count_in(
                blend.words,
                text,
            )) / total
        };
        let mut list: heapless::Vec<Suggestion, K> = heapless::Vec::new();
        for s in plain.list.iter().filter(|s| s.finished) {
            let logprob = blend.blend(s.logprob, cache(&s.text));
            insert_ranked(
                &mut list,
                width,
                Suggestion {
                    logprob,
                    ..s.clone()
                },
                |x| x.logprob,
            );
        }
        for learned in &self.learned {
            if plain
                .list
                .iter()
                .any(|s| s.finished && s.text == learned.text)
            {
                continue;
            }
            let model = if learned.scored {
                learned.logprob
            } else {
                f32::NEG_INFINITY
            };
            let logprob = blend.blend(model, f32::from(learned.count) / total);
            if logprob == f32::NEG_INFINITY {
                // Impossible under the blend (a weight of 0 and no model score).
                continue;
            }
            let suggestion = Suggestion {
                text: learned.text.clone(),
                logprob,
                finished: true,
            };
            insert_ranked(&mut list, width, suggestion, |x| x.logprob);
        }
        for s in plain.list.iter().filter(|s| !s.finished) {
            if list.len() >= width {
                break;
            }
            if !list.iter().any(|x| x.text == s.text) {
                let logprob = blend.blend(s.logprob, 0.0);
                let _ = list.push(Suggestion {
                    logprob,
                    ..s.clone()
                });
            }
        }
        Suggestions { list, ..plain }
    }

    /// The model's results alone (the search without a memory).
    fn model_result(&self, options: &SearchOptions<'_>) -> Suggestions<K> {
        let mut out = self.out.clone();
        out.cut_short |= self.running;
        let waiting = self.pending.get(self.next..).unwrap_or(&[]);
        for beam in self.stopped.iter().chain(waiting) {
            if out.list.len() >= options.width {
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
        out
    }
}

/// Whether `text` is `word` followed by a completion of `shape` (at least one byte).
fn fits_after(text: &[u8], word: &[u8], shape: Shape<'_>) -> bool {
    text.len() > word.len()
        && text.starts_with(word)
        && (matches!(shape, Shape::Free) || shape.fits(text.get(word.len()..).unwrap_or(&[])))
}

/// The learned words a search offers after `word`: those that start with it, add at least
/// one byte of the `shape` and pass the filter, the `options.width` most frequent (the most
/// recently used first among equals), model scores unknown.
fn learned_candidates<const K: usize>(
    blend: &CacheBlend<'_>,
    word: &[u8],
    shape: Shape<'_>,
    options: &SearchOptions<'_>,
) -> heapless::Vec<LearnedCandidate, K> {
    let mut chosen: heapless::Vec<LearnedCandidate, K> = heapless::Vec::new();
    let rank = |c: &LearnedCandidate| (c.count, c.last_used);
    for w in blend.words {
        let text = w.text();
        if !fits_after(text, word, shape) || !options.filter.offers(text) {
            continue;
        }
        let Ok(text) = Word::from_slice(text) else {
            continue;
        };
        let candidate = LearnedCandidate {
            text,
            count: w.count(),
            last_used: w.last_used(),
            logprob: f32::NEG_INFINITY,
            stepped: 0,
            scored: false,
        };
        let at = chosen
            .iter()
            .position(|c| rank(c) < rank(&candidate))
            .unwrap_or(chosen.len());
        if at < options.width {
            if chosen.len() >= options.width {
                chosen.pop();
            }
            let _ = chosen.insert(at, candidate);
        }
    }
    chosen
}

/// Whether a word scored `score` so far may still finish among the results: it must beat
/// the worst of a full list and come within the margin of the best finished word (scores
/// only fall as words grow).
fn is_open(finished: &[Suggestion], options: &SearchOptions<'_>, score: f32) -> bool {
    let best = finished.first().map_or(f32::NEG_INFINITY, |s| s.logprob);
    beats_worst(finished, options.width, score, |s| s.logprob) && score >= best - options.margin
}

/// Scores every one-byte extension of `beam` (index `parent` of its round) from the logits
/// after it: finished words go to `finished`, the best unfinished ones to `candidates`.
#[allow(clippy::too_many_arguments)]
fn extend<const K: usize>(
    beam: &Beam,
    parents: &[Beam],
    parent: usize,
    logits: &[f32],
    started: usize,
    shape: Shape<'_>,
    options: &SearchOptions<'_>,
    finished: &mut heapless::Vec<Suggestion, K>,
    candidates: &mut heapless::Vec<Candidate, K>,
) {
    let width = options.width;
    let norm = LogSoftmax::of(logits);
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
            && may_enter(candidates, width, score)
        {
            let mut text = beam.text.clone();
            let _ = text.push(byte);
            if options.filter.may_extend(&text) {
                let parent_text = |i: usize| {
                    if i == parent {
                        beam.text.as_slice()
                    } else {
                        parents.get(i).map_or(&[][..], |p| p.text.as_slice())
                    }
                };
                let new = Candidate {
                    parent,
                    byte,
                    score,
                };
                insert_candidate(candidates, width, new, parent_text);
            }
        }
    }
}

/// Whether a candidate scored `score` could enter the full or not full `candidates` (the
/// quick check before [`insert_candidate`]): at best it pushes out a second case counted
/// [`SECOND_CASE_COST`] below its score.
fn may_enter(candidates: &[Candidate], width: usize, score: f32) -> bool {
    beats_worst(candidates, width, score + SECOND_CASE_COST, |c| c.score)
}

/// On 12-key entry, how many times [`SearchOptions::margin`] a candidate may fall below the
/// best of its round. With the demo models and 3 beams, the share of words offered first for
/// their keys (`inkling eval --keypad`) was, for factors 1 / 2 / 4 / none: 74.3% / 84.6% /
/// 89.8% / 89.8% on outside quotations (base model) and 97.3% / 99.7% / 100% / 100% on the
/// scenario's held-out text; 4 keeps that at a bounded cost.
pub(crate) const KEYS_MARGIN_FACTOR: f32 = 4.0;

/// How much less a second case of a word counts when the beams are contested, in nats:
/// `Tamsel` beside a likelier `tamsel` keeps its beam against a different word only if it is
/// more than this likelier than that word. Without it, on 12-key entry (each key stands for
/// its letters in both cases) `FL`, `Fl` and `fl` fill the beams and push out `El`; with an
/// infinite cost, the first letter's case would be settled by its first byte alone (`t`
/// likelier than `T` before `amsel`). 1.5 nats (about 4.5 times) was chosen on the demo
/// model's 12-key names; common practice, no source.
pub(crate) const SECOND_CASE_COST: f32 = 1.5;

/// Puts `new` among the ranked `candidates` (at most `width`). When they are full, the one
/// to leave is the lowest by score, where a candidate that is a second case of a likelier one
/// (the same word up to ASCII case) counts [`SECOND_CASE_COST`] less; `new` leaves if it is
/// that one (a tie keeps what was there).
fn insert_candidate<'t, const K: usize>(
    candidates: &mut heapless::Vec<Candidate, K>,
    width: usize,
    new: Candidate,
    parent_text: impl Fn(usize) -> &'t [u8],
) {
    if candidates.len() < width {
        insert_ranked(candidates, width, new, |c| c.score);
        return;
    }
    let same_word = |a: &Candidate, b: &Candidate| {
        a.byte.eq_ignore_ascii_case(&b.byte)
            && parent_text(a.parent).eq_ignore_ascii_case(parent_text(b.parent))
    };
    let counted = |c: &Candidate| {
        let second = candidates
            .iter()
            .chain(core::iter::once(&new))
            .any(|o| o.score > c.score && same_word(o, c));
        if second {
            c.score - SECOND_CASE_COST
        } else {
            c.score
        }
    };
    let mut leaving: Option<(usize, f32)> = None;
    for (i, c) in candidates.iter().enumerate() {
        let v = counted(c);
        // Among equals the later one leaves, as `insert_ranked` drops the last.
        if leaving.is_none_or(|(_, worst)| v <= worst) {
            leaving = Some((i, v));
        }
    }
    let Some((at, worst)) = leaving else {
        return;
    };
    if counted(&new) <= worst {
        return;
    }
    candidates.remove(at);
    insert_ranked(candidates, width, new, |c| c.score);
}

/// The beams of the next round, one per candidate (same order), each in a slot holding its
/// parent's state: the first child of a beam takes over its parent's slot (the root's is
/// never written: its children get copies), the others copies in slots no child inherits.
fn assign_slots<const K: usize>(
    parents: &[Beam],
    candidates: &[Candidate],
    slots: &mut Slots<'_>,
    first_beam: usize,
) -> heapless::Vec<Beam, K> {
    let beam_slot = |slot: usize| slot.checked_sub(first_beam).filter(|&i| i < K);
    let mut busy = [false; K];
    for c in candidates {
        if let Some(flag) = parents
            .get(c.parent)
            .and_then(|p| beam_slot(p.slot))
            .and_then(|i| busy.get_mut(i))
        {
            *flag = true;
        }
    }
    let mut inherited = [false; K];
    let mut next: heapless::Vec<Beam, K> = heapless::Vec::new();
    for c in candidates {
        let Some(parent) = parents.get(c.parent) else {
            continue;
        };
        let first_child = inherited
            .get_mut(c.parent)
            .map(|flag| !core::mem::replace(flag, true))
            .unwrap_or(false);
        let slot = if first_child && beam_slot(parent.slot).is_some() {
            parent.slot
        } else {
            // At most K children, and each parent in a beam slot keeps one for its first
            // child: a free slot always exists.
            let Some(free) = busy.iter().position(|b| !b) else {
                continue;
            };
            if let Some(flag) = busy.get_mut(free) {
                *flag = true;
            }
            slots.copy_state(parent.slot, first_beam + free);
            first_beam + free
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
    use super::{insert_candidate, may_enter, Candidate};
    use crate::engine::buffers::Scratch;
    use crate::engine::recurrence::step;
    use crate::image::example::tiny_image;
    use crate::session::{is_boundary, SearchOptions, Session, Suggestion, PRIME_BYTE};
    use crate::Model;

    /// The log-probability of `text` after `context`, by the chain rule
    /// `log p(x_1..x_n) = Σ log p(x_i | x_<i)`, with log-softmax evaluated in f64 from its
    /// definition on a fresh state kept as the session keeps it (rounded to binary16 after
    /// every byte); a finished word adds its most likely boundary byte.
    fn chain_rule_logprob(model: &Model<'_>, context: &[u8], s: &Suggestion) -> f64 {
        let dims = *model.dims();
        let mut state = [0.0f32; 512];
        let state = &mut state[..dims.state_len()];
        let (mut work, mut act) = ([0.0f32; 512], [0i16; 64]);
        let mut scratch = Scratch::new(&dims, &mut work, &mut act).unwrap();
        let mut logits = [0.0f32; 256];
        let mut feed = |b: u8, logits: &mut [f32; 256]| {
            logits.copy_from_slice(step(model, state, &mut scratch, b).unwrap());
            for v in state.iter_mut() {
                *v = half::f16::from_f32(*v).to_f32();
            }
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

    /// The bytes of the candidates after the root (parent 0, no text) given as `(byte,
    /// score)`, once `(byte, score)` is offered.
    fn after_offering(list: &[(u8, f32)], (byte, score): (u8, f32)) -> heapless::Vec<u8, 3> {
        let mut list: heapless::Vec<Candidate, 3> = list
            .iter()
            .map(|&(byte, score)| Candidate {
                parent: 0,
                byte,
                score,
            })
            .collect();
        let new = Candidate {
            parent: 0,
            byte,
            score,
        };
        if may_enter(&list, 3, score) {
            insert_candidate(&mut list, 3, new, |_| &b""[..]);
        }
        list.iter().map(|c| c.byte).collect()
    }

    #[test]
    fn a_second_case_gives_way_to_a_different_word_unless_much_likelier() {
        // E beside F, D and a second case f: f leaves, though E scores below it.
        let list = [(b'F', -3.3), (b'D', -3.35), (b'f', -3.5)];
        assert_eq!(after_offering(&list, (b'E', -3.6)), b"FDE"[..]);
        // T, a second case of t, more than SECOND_CASE_COST likelier than V: V leaves...
        let list = [(b't', -2.7), (b'U', -8.0), (b'V', -9.0)];
        assert_eq!(after_offering(&list, (b'T', -3.2)), b"tTU"[..]);
        // ... but not within it: U and V stay.
        let list = [(b't', -2.7), (b'U', -4.0), (b'V', -4.1)];
        assert_eq!(after_offering(&list, (b'T', -3.2)), b"tUV"[..]);
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

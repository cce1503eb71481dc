//! Endless typing soak: megabytes of mixed text, random bytes (invalid UTF-8 among them) and
//! edit bursts (backspace runs, clears, searches) through a typing session, checking that
//! - every logit stays finite and within a bound derived from the weights,
//! - every state element stays finite and within a bound derived from the weights (below),
//! - a second session restored from a snapshot taken at a random point gives bit for bit the
//!   same logits and suggestions as the first from then on.
//!
//! Two models: the tiny example image for 10 MB, and a random model of the demo's shape
//! (3 blocks, D 96, I 128, N 8, K 4, R 6), converted from a checkpoint drawn by
//! `tests/reference/make_checkpoint.py`, for 150 KB: it is about 20× slower per byte
//! (measured 2.8 µs and 64 µs per step on the same loaded 2-core host), so 1 MB of it
//! alone would take about a minute.
//!
//! ## The bounds (derived from the published block equations, Gu & Dao 2023, Alg. 2)
//! Per block, with the residual `u` unbounded:
//! - RMSNorm (Zhang & Sennrich 2019): `|v_i| / sqrt(mean(v²) + eps) ≤ sqrt(D)`, so
//!   `|h_i| ≤ H = sqrt(D) · max|norm|`. The dynamic int8 quantisation of an activation vector
//!   uses the vector's own maximum as full scale, so it never makes a value larger.
//! - Conv window and conv input (rows `0..I` of `expand · h`): `|x_in_i| ≤ H · Σ_c |expand_ic|`.
//! - After the convolution: `|x_i| ≤ max(|conv_bias_i| + Σ_k |conv_ik| · X_in_i, 0.2785)`;
//!   SiLU is below its argument's magnitude for positive arguments, and its minimum is
//!   ≈ −0.2785 (checked numerically below).
//! - `|r_j|, |B_n| ≤ max_i X_i · Σ_i |select_ji|`; softplus is increasing, so
//!   `dt_i ≤ dt⁺_i = softplus(step_bias_i + Σ_j |step_ij| · R_j)`.
//! - SSM state: `s ← a·s + dt·B·x` with `a = exp(dt·A)`, `A < 0`. If `|s| ≤ g(dt⁺)·X_i·B_n`
//!   with `g(dt) = dt / (1 − exp(dt·A))`, the update keeps it there, because `g` is increasing
//!   in `dt` (it is `y·eᵞ/(eᵞ−1)/|A|` with `y = dt·|A|`); the state starts at zero.
//! - Logits: `|logit_b| ≤ sqrt(D) · max|final_norm| · Σ_c |head_bc|`.
//!
//! The bounds take the weights as stored (after int8 quantisation) and get 1% slack for f32
//! rounding (common practice, no source). They are loose, but any blow-up, NaN or leak of one
//! beam's state into another would break them.

use std::path::Path;
use std::time::Instant;

use inkling_core::image::format::{Role, VOCAB};
use inkling_core::image::views::{Floats, QuantMatrix};
use inkling_core::session::{is_boundary, SearchOptions, Session, DEFAULT_HISTORY, MAX_WORD_LEN};
use inkling_core::{Error, KeyMap, Model, Suggestions};
use inkling_host::keystroke_savings::session_memory;
use inkling_quantize::{convert, Checkpoint, ConvertOptions};
use inkling_tests::checkpoint_spec::{CheckpointSpec, Dtype};
use inkling_tests::numpy_reference::make_checkpoint;
use inkling_tests::run_seed::{base_seed, SplitMix64};

/// Beams of the soaked sessions.
const BEAMS: usize = 3;
/// Step budget of each search (a keystroke's worth on a device).
const MAX_STEPS: usize = 48;
/// Slack on the derived bounds for f32 rounding.
const SLACK: f64 = 1.01;
/// Events between two full state checks (the logits are checked after every event).
const STATE_CHECK_EVERY: u64 = 256;
/// Events compared between the original and the restored session after each restore.
const COMPARE_EVENTS: u64 = 100;

type SoakSession<'b> = Session<'b, Model<'b>, BEAMS>;

/// Per-element bounds of a model's state and logits (see the module comment).
struct Bounds {
    state: Vec<f32>,
    logit: Vec<f32>,
}

fn silu(v: f64) -> f64 {
    v / (1.0 + (-v).exp())
}

fn softplus(v: f64) -> f64 {
    v.exp().ln_1p()
}

fn row_l1(m: QuantMatrix<'_>, r: usize) -> f64 {
    (0..m.cols()).map(|c| f64::from(m.weight(r, c).abs())).sum()
}

fn max_abs(v: Floats<'_>) -> f64 {
    v.iter().fold(0.0f64, |m, x| m.max(f64::from(x.abs())))
}

fn bounds(model: &Model<'_>) -> Bounds {
    let d = *model.dims();
    let (i_n, n, k, r) = (d.d_inner, d.d_state, d.d_conv, d.dt_rank);
    // SiLU's minimum, ≈ −0.2785 at v ≈ −1.2785 (from memory; the scan checks it).
    let silu_floor = (-5000..0)
        .map(|j| -silu(f64::from(j) / 1000.0))
        .fold(0.0f64, f64::max);
    assert!(
        (silu_floor - 0.2785).abs() < 1e-3,
        "silu minimum {silu_floor}"
    );
    let sqrt_d = (d.d_model as f64).sqrt();
    let mut state = Vec::with_capacity(d.state_len());
    for l in 0..d.blocks {
        let h = sqrt_d * max_abs(model.block_floats(l, Role::Norm));
        let expand = model.block_matrix(l, Role::Expand);
        let x_in: Vec<f64> = (0..i_n).map(|i| h * row_l1(expand, i)).collect();
        let conv = model.block_floats(l, Role::Conv);
        let conv_bias = model.block_floats(l, Role::ConvBias);
        let x: Vec<f64> = (0..i_n)
            .map(|i| {
                let taps: f64 = conv
                    .slice(i * k, k)
                    .iter()
                    .map(|t| f64::from(t.abs()))
                    .sum();
                (f64::from(conv_bias.get(i).abs()) + taps * x_in[i]).max(silu_floor)
            })
            .collect();
        let x_max = x.iter().fold(0.0f64, |m, &v| m.max(v));
        let select = model.block_matrix(l, Role::Select);
        let rank: Vec<f64> = (0..r).map(|j| x_max * row_l1(select, j)).collect();
        let b: Vec<f64> = (0..n).map(|j| x_max * row_l1(select, r + j)).collect();
        let step = model.block_floats(l, Role::Step);
        let step_bias = model.block_floats(l, Role::StepBias);
        let decay = model.block_floats(l, Role::Decay);
        for &xi in &x_in {
            for _ in 0..k - 1 {
                state.push((xi * SLACK) as f32);
            }
        }
        for (i, &xi) in x.iter().enumerate() {
            let pre: f64 = rank
                .iter()
                .enumerate()
                .map(|(j, &rj)| f64::from(step.get(i * r + j).abs()) * rj)
                .sum();
            let dt = softplus(f64::from(step_bias.get(i)) + pre);
            for (j, &bj) in b.iter().enumerate() {
                let a = f64::from(decay.get(i * n + j));
                assert!(a < 0.0, "block {l}: A[{i},{j}] = {a} is not negative");
                let g = dt / -(dt * a).exp_m1();
                state.push((g * xi * bj * SLACK) as f32);
            }
        }
    }
    let head = model.head();
    let top = sqrt_d * max_abs(model.final_norm());
    let logit = (0..VOCAB)
        .map(|b| (top * row_l1(head, b) * SLACK) as f32)
        .collect();
    Bounds { state, logit }
}

/// One thing the typist does.
#[derive(Clone, Debug)]
enum Event {
    Bytes(Vec<u8>),
    Backspaces(usize),
    Clear,
    Suggest,
    Keys(Vec<u8>),
}

/// Invented syllables for word-like text; several non-ASCII letters among them.
const SYLLABLES: [&str; 24] = [
    "ka", "lo", "mi", "ter", "an", "sel", "dru", "vo", "ne", "sta", "pel", "or", "qui", "fe", "ré",
    "ün", "ça", "ßo", "зе", "μα", "日", "の", "ng", "x",
];
const ENDINGS: [&[u8]; 8] = [b" ", b" ", b" ", b", ", b". ", b"\n", b"?\n", b"\t"];

/// A stream of typing events drawn from a seed. The mix keeps backspaces across a word
/// boundary (each a recovery of up to `H + 1` steps) rare enough for 10 MB to fit the time.
struct Typist {
    rng: SplitMix64,
    queued: Vec<Event>,
}

impl Typist {
    fn new(seed: u64) -> Self {
        Typist {
            rng: SplitMix64::new(seed),
            queued: Vec::new(),
        }
    }

    fn below(&mut self, n: usize) -> usize {
        (self.rng.next_u64() % n as u64) as usize
    }

    fn word(&mut self) -> Vec<u8> {
        let mut word = Vec::new();
        for _ in 0..1 + self.below(4) {
            word.extend_from_slice(SYLLABLES[self.below(SYLLABLES.len())].as_bytes());
        }
        if self.below(20) == 0 {
            // A UTF-8 sequence cut short: a lead byte with no continuation.
            word.push([0xC3, 0xE6, 0xF0][self.below(3)]);
        }
        word
    }

    fn next(&mut self) -> Event {
        if let Some(event) = self.queued.pop() {
            return event;
        }
        // Per 20,000 events: 1,600 typos taken back, 2,200 runs of random bytes, 40 short and
        // 2 long backspace runs across boundaries, 40 clears, 160 searches, 40 12-key
        // searches; the rest are words with their ending.
        match self.below(20_000) {
            0..=1_599 => {
                // A typo inside a word, taken back at once, then the word finished.
                let mut typed = self.word();
                let cut = 1 + self.below(typed.len());
                let mut rest = typed.split_off(cut);
                let wrong = 1 + self.below(3);
                typed.extend((0..wrong).map(|_| b'a' + self.below(26) as u8));
                rest.push(b' ');
                self.queued.push(Event::Bytes(rest));
                self.queued.push(Event::Backspaces(wrong));
                Event::Bytes(typed)
            }
            1_600..=3_799 => {
                let len = 1 + self.below(24);
                Event::Bytes((0..len).map(|_| self.rng.next_u64() as u8).collect())
            }
            3_800..=3_839 => Event::Backspaces(1 + self.below(4)),
            3_840..=3_841 => Event::Backspaces(20 + self.below(60)),
            3_842..=3_881 => Event::Clear,
            3_882..=4_041 => Event::Suggest,
            4_042..=4_081 => {
                let len = 1 + self.below(5);
                Event::Keys((0..len).map(|_| b'2' + self.below(8) as u8).collect())
            }
            _ => {
                let mut word = self.word();
                word.extend_from_slice(ENDINGS[self.below(ENDINGS.len())]);
                Event::Bytes(word)
            }
        }
    }
}

/// What an event gave: the suggestions of a search (`None` for edits), as bits.
type Outcome = Option<Vec<(Vec<u8>, u32, bool)>>;

fn options() -> SearchOptions<'static> {
    SearchOptions {
        max_steps: MAX_STEPS,
        ..SearchOptions::new(BEAMS)
    }
}

fn as_bits(found: Suggestions<BEAMS>) -> Vec<(Vec<u8>, u32, bool)> {
    let mut out: Vec<_> = found
        .list
        .iter()
        .map(|s| (s.text.to_vec(), s.logprob.to_bits(), s.finished))
        .collect();
    out.push((Vec::new(), found.steps as u32, found.cut_short));
    out
}

/// Applies an event; returns the bytes fed and what a search gave.
fn apply(session: &mut SoakSession<'_>, event: &Event) -> (usize, Outcome) {
    match event {
        Event::Bytes(bytes) => {
            let mut fed = 0;
            for &b in bytes {
                match session.push(b) {
                    Ok(()) => fed += 1,
                    // A 33rd word byte is refused; the typist's next boundary goes through.
                    Err(Error::CapacityExceeded { buffer: "word", .. }) => {
                        assert!(!is_boundary(b) && session.word().len() == MAX_WORD_LEN);
                    }
                    Err(e) => panic!("push {b:#04x}: {e}"),
                }
            }
            (fed, None)
        }
        Event::Backspaces(n) => {
            for _ in 0..*n {
                session.backspace().expect("backspace");
            }
            (0, None)
        }
        Event::Clear => {
            session.clear().expect("clear");
            (0, None)
        }
        Event::Suggest => {
            let found = session
                .suggest(&options())
                .expect("a search within capacity");
            (0, Some(as_bits(found)))
        }
        Event::Keys(keys) => match session.keys(keys, &KeyMap::E161, &options()) {
            Ok(found) => (0, Some(as_bits(found))),
            Err(Error::CapacityExceeded { buffer: "word", .. }) => {
                assert!(session.word().len() + keys.len() > MAX_WORD_LEN);
                (0, None)
            }
            Err(e) => panic!("keys {keys:?}: {e}"),
        },
    }
}

fn logit_bits(session: &SoakSession<'_>) -> Vec<u32> {
    session.logits().iter().map(|v| v.to_bits()).collect()
}

fn check_logits(session: &SoakSession<'_>, bounds: &Bounds, fed: u64) {
    for (b, (&v, &limit)) in session.logits().iter().zip(&bounds.logit).enumerate() {
        assert!(
            v.is_finite() && v.abs() <= limit,
            "after {fed} bytes: logit[{b}] = {v}, bound {limit}"
        );
    }
}

/// Checks every state element against its bound; returns the largest |value| / bound.
fn check_state(saved: &[f32], bounds: &Bounds, fed: u64) -> f32 {
    let len = bounds.state.len();
    let mut worst = 0.0f32;
    // The saved floats: live state and logits, then the boundary snapshot and its logits.
    for part in saved.chunks_exact(len + VOCAB) {
        for (j, (&v, &limit)) in part[..len].iter().zip(&bounds.state).enumerate() {
            assert!(
                v.is_finite() && v.abs() <= limit,
                "after {fed} bytes: state[{j}] = {v}, bound {limit}"
            );
            if limit > 0.0 {
                worst = worst.max(v.abs() / limit);
            }
        }
    }
    worst
}

/// Types `total` bytes of the seed's event stream into a session over `image`, with all the
/// checks of the module comment, restoring into the second session about once every
/// `restore_every` events; panics on the first failure.
fn soak(image: &[u8], total: u64, restore_every: u64, seed: u64, name: &str) {
    let model = Model::from_bytes(image).expect("the soaked image loads");
    let bounds = bounds(&model);
    let (mut b1, mut b2) = (
        session_memory(model.dims(), BEAMS),
        session_memory(model.dims(), BEAMS),
    );
    let mut first = b1
        .session::<_, BEAMS, DEFAULT_HISTORY>(model)
        .expect("buffers sized by the model");
    let mut second = b2
        .session::<_, BEAMS, DEFAULT_HISTORY>(model)
        .expect("buffers sized by the model");
    let mut saved = vec![0.0f32; first.saved_len()];
    let mut typist = Typist::new(seed);
    let mut picker = SplitMix64::new(seed ^ 0x5EED);
    let (mut fed, mut events, mut restores, mut searches) = (0u64, 0u64, 0u64, 0u64);
    let mut compare_until = 0u64;
    let mut worst = 0.0f32;
    let start = Instant::now();
    while fed < total {
        let event = typist.next();
        let (n, outcome) = apply(&mut first, &event);
        fed += n as u64;
        events += 1;
        searches += u64::from(outcome.is_some());
        check_logits(&first, &bounds, fed);
        if events < compare_until {
            let (_, again) = apply(&mut second, &event);
            assert_eq!(
                again, outcome,
                "{name}: restored session's search, {fed} bytes"
            );
            assert_eq!(
                logit_bits(&second),
                logit_bits(&first),
                "{name}: restored session's logits, {fed} bytes"
            );
            assert_eq!(second.word(), first.word());
        } else if picker.next_u64().is_multiple_of(restore_every) {
            // A snapshot at a random point, restored into the other session.
            first.save(&mut saved).expect("save");
            second
                .restore(&saved, first.word(), first.history())
                .expect("restore");
            assert_eq!(logit_bits(&second), logit_bits(&first));
            compare_until = events + COMPARE_EVENTS;
            restores += 1;
        }
        if events.is_multiple_of(STATE_CHECK_EVERY) {
            first.save(&mut saved).expect("save");
            worst = worst.max(check_state(&saved, &bounds, fed));
        }
    }
    let secs = start.elapsed().as_secs_f64();
    println!(
        "{name}: {fed} bytes, {events} events, {searches} searches, {restores} restores in \
         {secs:.1} s ({:.0} bytes/s); largest state / bound {worst:.3e}",
        fed as f64 / secs
    );
    assert!(restores >= 3, "{name}: only {restores} restores");
}

#[test]
fn ten_megabytes_on_the_tiny_model() {
    let seed = base_seed();
    let image = inkling_core::image::example::tiny_image();
    soak(&image, 10_000_000, 2000, seed, "tiny model");
}

#[test]
fn demo_shape_model() {
    let seed = base_seed();
    let dir = tempfile::tempdir().expect("a temporary folder");
    let path = dir.path().join("demo-shape.safetensors");
    let spec = CheckpointSpec {
        d: 96,
        i: 128,
        n: 8,
        k: 4,
        r: 6,
        blocks: 3,
        tied: true,
        dtype: Dtype::F32,
        seed,
    };
    make_checkpoint(&spec, &path);
    let checkpoint = Checkpoint::load(Path::new(&path), &inkling_quantize::ReadOptions::default())
        .expect("load");
    let (image, _) = convert(&checkpoint, &ConvertOptions::default()).expect("convert");
    soak(&image, DEMO_SHAPE_BYTES, 400, seed, "demo-shape model");
}

/// Bytes typed into the demo-shape model.
const DEMO_SHAPE_BYTES: u64 = 150_000;

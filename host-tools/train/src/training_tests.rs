//! End-to-end checks of the trainer: learning happens, checkpoints follow the
//! schema, and a resumed run continues exactly where it stopped.

use std::cell::{Cell, RefCell};
use std::path::Path;

use inkling_core::Dims;
use inkling_quantize::checkpoint::DEFAULT_NORM_EPS;
use safetensors::SafeTensors;

use crate::batches::Corpus;
use crate::checkpoint_file::{optimizer_path, read_checkpoint};
use crate::progress::{Progress, StepReport};
use crate::shapes::{SMALL, TINY};
use crate::training_run::{train, TrainOptions};

fn text() -> Vec<u8> {
    b"the cat sat on the mat. the dog sat on the log. ".repeat(60)
}

fn options(out: &Path, steps: u64) -> TrainOptions {
    TrainOptions {
        out: out.to_owned(),
        shape: Some((TINY, "tiny".into())),
        steps,
        seconds: None,
        resume: None,
        from: None,
        batch: 8,
        seq_len: 32,
        lr: 1e-2,
        seed: 5,
        checkpoint_every: 1000,
        threads: 2,
    }
}

/// Keeps the events of a run.
#[derive(Default)]
struct Recorder {
    started: Cell<Option<(u64, u64)>>,
    steps: RefCell<Vec<StepReport>>,
    saved: RefCell<Vec<u64>>,
}

impl Progress for Recorder {
    fn started(&self, step: u64, steps: u64) {
        self.started.set(Some((step, steps)));
    }
    fn step_done(&self, report: &StepReport) {
        self.steps.borrow_mut().push(*report);
    }
    fn checkpoint_saved(&self, step: u64) {
        self.saved.borrow_mut().push(step);
    }
}

#[test]
fn loss_falls_on_repetitive_text() {
    let dir = tempfile::tempdir().unwrap();
    let corpus = Corpus::unweighted(vec![text()], 0.05).unwrap();
    let out = dir.path().join("m.safetensors");
    let s = train(&corpus, &options(&out, 300), &|| false, &()).unwrap();
    // Start: ≈ ln 256 = 5.55 nats (uniform guess over bytes). The text has 12
    // distinct bytes and a 48-byte period, so a model that learned anything beyond
    // byte frequencies is far below the order-0 entropy (≈ 3.2 bits = 2.2 nats).
    assert!(
        s.final_train_bits_per_byte < 1.5 / std::f64::consts::LN_2,
        "final loss {}",
        s.final_train_bits_per_byte
    );
    let held = s.heldout_bits_per_byte.unwrap();
    assert!(held < 2.5, "held-out {held} bits per byte");
    for p in [&s.checkpoint, &s.optimizer_state, &s.loss_csv, &s.loss_svg] {
        assert!(p.exists(), "{} missing", p.display());
    }
}

#[test]
fn checkpoint_follows_the_schema() {
    let dir = tempfile::tempdir().unwrap();
    let corpus = Corpus::unweighted(vec![text()], 0.05).unwrap();
    let out = dir.path().join("m.safetensors");
    let untied = Dims {
        tied_head: false,
        ..TINY
    };
    let opts = TrainOptions {
        shape: Some((untied, "tiny".into())),
        ..options(&out, 3)
    };
    train(&corpus, &opts, &|| false, &()).unwrap();
    let bytes = std::fs::read(&out).unwrap();
    let st = SafeTensors::deserialize(&bytes).unwrap();
    // The schema table of the design, for tiny: D=16, I=32, N=4, K=4, R=2.
    let (d, i, n, k, r) = (16, 32, 4, 4, 2);
    let mut want = vec![
        ("byte_embed".to_string(), vec![256, d]),
        ("final_norm".to_string(), vec![d]),
        ("head".to_string(), vec![256, d]),
    ];
    for (t, shape) in [
        ("norm", vec![d]),
        ("expand", vec![2 * i, d]),
        ("conv", vec![i, k]),
        ("conv_bias", vec![i]),
        ("select", vec![r + 2 * n, i]),
        ("step", vec![i, r]),
        ("step_bias", vec![i]),
        ("decay", vec![i, n]),
        ("skip", vec![i]),
        ("contract", vec![d, i]),
    ] {
        want.push((format!("blocks.0.{t}"), shape));
    }
    let mut names: Vec<String> = st.names().into_iter().map(String::from).collect();
    names.sort();
    let mut want_names: Vec<String> = want.iter().map(|(n, _)| n.clone()).collect();
    want_names.sort();
    assert_eq!(names, want_names);
    for (name, shape) in &want {
        let t = st.tensor(name).unwrap();
        assert_eq!(t.shape(), &shape[..], "{name}");
        assert_eq!(t.dtype(), safetensors::Dtype::F32, "{name}");
    }
    let (_, header) = SafeTensors::read_metadata(&bytes).unwrap();
    let meta = header.metadata().clone().unwrap();
    assert_eq!(meta["norm_eps"].parse::<f32>(), Ok(DEFAULT_NORM_EPS));
    assert_eq!(meta["config"], "tiny");
    assert_eq!(meta["step"], "3");
    let back = read_checkpoint(&out).unwrap();
    assert_eq!(back.step, 3);
    assert!(!back.dims.tied_head);
    assert_eq!(back.dims, super::model_params::Layout::new(back.dims).dims);
}

#[test]
fn resume_continues_from_the_saved_step() {
    let dir = tempfile::tempdir().unwrap();
    let corpus = Corpus::unweighted(vec![text()], 0.05).unwrap();
    let never = || false;
    let straight = dir.path().join("straight.safetensors");
    train(&corpus, &options(&straight, 30), &never, &()).unwrap();
    // The same run, stopped (as by Ctrl-C) before its 13th step.
    let split = dir.path().join("split.safetensors");
    let asked = Cell::new(0);
    let stop_at_12 = || {
        asked.set(asked.get() + 1);
        asked.get() > 12
    };
    let first = train(&corpus, &options(&split, 30), &stop_at_12, &()).unwrap();
    assert!(first.interrupted);
    assert_eq!(first.steps, 12);
    let resumed = TrainOptions {
        resume: Some(split.clone()),
        shape: None,
        ..options(&split, 30)
    };
    let s = train(&corpus, &resumed, &never, &()).unwrap();
    assert_eq!(s.steps, 30);
    assert!(optimizer_path(&split).exists());
    // Batches depend only on (seed, step) and the optimizer state is restored, so
    // the resumed run must reproduce the uninterrupted one bit for bit.
    let (a, b) = (
        read_checkpoint(&straight).unwrap(),
        read_checkpoint(&split).unwrap(),
    );
    assert_eq!(b.step, 30);
    assert!(
        a.params == b.params,
        "resumed run differs from the uninterrupted one"
    );
    let curve = std::fs::read_to_string(dir.path().join("split.safetensors.loss.csv")).unwrap();
    assert_eq!(curve.lines().count(), 31, "header + one row per step");
}

#[test]
fn fine_tuning_starts_from_the_trained_weights_with_a_fresh_schedule() {
    let dir = tempfile::tempdir().unwrap();
    let corpus = Corpus::unweighted(vec![text()], 0.05).unwrap();
    let never = || false;
    let base = dir.path().join("base.safetensors");
    train(&corpus, &options(&base, 200), &never, &()).unwrap();
    // A new text of the same words; the fine-tuned run counts its steps from 0.
    let other = Corpus::unweighted(
        vec![b"the dog sat on the mat. the cat sat on the log. ".repeat(60)],
        0.05,
    )
    .unwrap();
    let tuned = dir.path().join("tuned.safetensors");
    let from = TrainOptions {
        from: Some(base.clone()),
        shape: None,
        ..options(&tuned, 20)
    };
    let s = train(&other, &from, &never, &()).unwrap();
    assert_eq!(s.steps, 20);
    let fresh = dir.path().join("fresh.safetensors");
    train(&other, &options(&fresh, 20), &never, &()).unwrap();
    // The first step's loss: a trained model already knows the shared words and letters,
    // a fresh one starts near ln 256 = 5.55 nats (a uniform guess over bytes).
    let first_loss = |p: &Path| {
        let csv = std::fs::read_to_string(format!("{}.loss.csv", p.display())).unwrap();
        let row = csv.lines().nth(1).unwrap().to_string();
        row.split(',').nth(1).unwrap().parse::<f64>().unwrap()
    };
    assert!(
        first_loss(&tuned) < first_loss(&fresh) - 1.0,
        "tuned {} fresh {}",
        first_loss(&tuned),
        first_loss(&fresh)
    );
    // Another shape is refused, naming both.
    let small = TrainOptions {
        from: Some(base.clone()),
        shape: Some((SMALL, "small".into())),
        ..options(&dir.path().join("x.safetensors"), 5)
    };
    let err = train(&other, &small, &never, &())
        .err()
        .unwrap()
        .to_string();
    assert!(err.contains("d=96") && err.contains("d=16"), "{err}");
}

#[test]
fn the_checkpoint_holds_the_best_held_out_step() {
    let dir = tempfile::tempdir().unwrap();
    // Held out: the tail, a different text from the training part, so held-out loss
    // need not follow the training loss.
    let mut bytes = text();
    bytes.extend(b"quick brown foxes jump over lazy dogs. ".repeat(8));
    let corpus = Corpus::unweighted(vec![bytes], 0.1).unwrap();
    let out = dir.path().join("m.safetensors");
    let events = Recorder::default();
    let s = train(&corpus, &options(&out, 400), &|| false, &events).unwrap();
    let csv = std::fs::read_to_string(dir.path().join("m.safetensors.loss.csv")).unwrap();
    let (best_step, best) = csv
        .lines()
        .skip(1)
        .filter_map(|l| {
            let f: Vec<&str> = l.split(',').collect();
            Some((f[0].parse::<u64>().ok()?, f.get(3)?.parse::<f64>().ok()?))
        })
        .fold((0, f64::INFINITY), |a, b| if b.1 < a.1 { b } else { a });
    assert_eq!(s.checkpoint_step, best_step);
    assert_eq!(read_checkpoint(&out).unwrap().step, best_step);
    assert!((s.checkpoint_heldout_bits_per_byte.unwrap() - best).abs() < 1e-4);
    // The events follow the run: one report per step, the last checkpoint written is the
    // best step's, and the time left falls to nothing.
    assert_eq!(events.started.get(), Some((0, 400)));
    let steps = events.steps.borrow();
    assert_eq!(steps.len(), 400);
    assert!(steps
        .iter()
        .enumerate()
        .all(|(k, r)| r.step == k as u64 + 1));
    assert_eq!(steps[399].eta_seconds, 0.0);
    assert!(steps[399].heldout_bits_per_byte.is_some());
    assert_eq!(events.saved.borrow().last(), Some(&best_step));
}

//! The training loop: batches over worker threads, AdamW steps, periodic
//! held-out evaluation, checkpoints, and a clean stop on request.

use std::path::PathBuf;
use std::time::Instant;

use rand::SeedableRng;
use rayon::prelude::*;

use crate::adamw::{clip_global_norm, learning_rate, AdamW, DEFAULT_SETTINGS};
use crate::batches::Corpus;
use crate::checkpoint_file::{
    optimizer_path, read_checkpoint, read_optimizer, write_checkpoint, write_optimizer,
};
use inkling_core::Dims;

use crate::error::TrainError;
use crate::forward_backward::{backward, forward, Workspace};
use crate::loss_curve::{read_csv, with_suffix, write_csv, write_svg, CurvePoint};
use crate::model_params::{init_params, Layout};
use crate::progress::{Memorising, Progress, StepReport};
use crate::shapes::describe;

/// Held-out evaluation reads at most this many windows (bounded time).
pub const MAX_HOLDOUT_WINDOWS: usize = 64;
/// Held-out evaluation happens every this many steps (and at each checkpoint).
const EVAL_EVERY: u64 = 100;
/// Gradient clipping threshold on the global L2 norm (common practice, no source).
const CLIP_NORM: f32 = 1.0;

#[derive(Clone, Debug)]
pub struct TrainOptions {
    pub out: PathBuf,
    /// The shape of a new model and its name (a preset's, or "custom"); required for a
    /// new model; with `resume` or `from` it must match the checkpoint's if given.
    pub shape: Option<(Dims, String)>,
    /// Train until this step count (including steps of a resumed checkpoint).
    pub steps: u64,
    /// Stop after this much training wall time (including a resumed run's).
    pub seconds: Option<f64>,
    pub resume: Option<PathBuf>,
    /// Start from this trained checkpoint's parameters, with a fresh optimizer and
    /// schedule (fine-tuning); its shape must match `shape` if that is given.
    pub from: Option<PathBuf>,
    pub batch: usize,
    pub seq_len: usize,
    pub lr: f32,
    pub seed: u64,
    pub checkpoint_every: u64,
    pub threads: usize,
}

#[derive(Clone, Debug, serde::Serialize)]
pub struct TrainSummary {
    pub steps: u64,
    /// Wall time of this run's training loop.
    pub seconds: f64,
    /// Mean training loss (bits per byte) over the last ≤ 10 steps.
    pub final_train_bits_per_byte: f64,
    pub heldout_bits_per_byte: Option<f64>,
    /// The step whose parameters the checkpoint holds: the one with the best held-out
    /// bits per byte (the last step when nothing is held out).
    pub checkpoint_step: u64,
    /// Held-out bits per byte of the checkpoint's parameters.
    pub checkpoint_heldout_bits_per_byte: Option<f64>,
    /// Held-out loss rose while training loss fell (the model began to memorise).
    pub overfitting_seen: bool,
    /// Training bytes (batch × sequence length) per second of this run.
    pub bytes_per_second: f64,
    pub interrupted: bool,
    pub checkpoint: PathBuf,
    pub optimizer_state: PathBuf,
    pub loss_csv: PathBuf,
    pub loss_svg: PathBuf,
}

/// A per-step seed: the data order depends only on (seed, step), so a resumed run
/// draws the same batches the uninterrupted run would have (SplitMix64 mixing
/// constant, Steele et al. 2014).
fn step_seed(seed: u64, step: u64) -> u64 {
    seed ^ step.wrapping_add(1).wrapping_mul(0x9E37_79B9_7F4A_7C15)
}

struct Workers {
    pool: rayon::ThreadPool,
    slots: Vec<(Workspace<f32>, Vec<f32>)>,
}

impl Workers {
    fn new(dims: Dims, len: usize, seq_len: usize, threads: usize) -> Result<Self, TrainError> {
        let pool = rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()?;
        let slots = (0..threads)
            .map(|_| (Workspace::new(dims, seq_len), vec![0.0; len]))
            .collect();
        Ok(Workers { pool, slots })
    }

    /// Mean loss (nats per predicted byte) of `windows`; its gradient is left in
    /// the first slot's gradient buffer.
    fn loss_and_gradient(&mut self, p: &[f32], lay: &Layout, windows: &[&[u8]]) -> f64 {
        let predicted: usize = windows.iter().map(|w| w.len() - 1).sum();
        let scale = 1.0 / predicted as f32;
        let per = windows.len().div_ceil(self.slots.len());
        let used = windows.len().div_ceil(per);
        let slots = &mut self.slots;
        let nats: f64 = self.pool.install(|| {
            slots
                .par_iter_mut()
                .zip(windows.par_chunks(per))
                .map(|((ws, g), chunk)| {
                    g.fill(0.0);
                    chunk
                        .iter()
                        .map(|w| {
                            let nats = forward(p, lay, ws, w);
                            backward(p, lay, ws, w, scale, g);
                            nats
                        })
                        .sum::<f64>()
                })
                .sum()
        });
        let (first, rest) = slots.split_at_mut(1);
        for (_, g) in &rest[..used - 1] {
            for (a, &b) in first[0].1.iter_mut().zip(g) {
                *a += b;
            }
        }
        nats / predicted as f64
    }

    /// Held-out bits per byte of `windows` (forward only).
    fn bits_per_byte(&mut self, p: &[f32], lay: &Layout, windows: &[&[u8]]) -> Option<f64> {
        if windows.is_empty() {
            return None;
        }
        let predicted: usize = windows.iter().map(|w| w.len() - 1).sum();
        let per = windows.len().div_ceil(self.slots.len());
        let slots = &mut self.slots;
        let nats: f64 = self.pool.install(|| {
            slots
                .par_iter_mut()
                .zip(windows.par_chunks(per))
                .map(|((ws, _), chunk)| chunk.iter().map(|w| forward(p, lay, ws, w)).sum::<f64>())
                .sum()
        });
        Some(nats / predicted as f64 / std::f64::consts::LN_2)
    }
}

/// Where a model starts: fresh from the shape, from a trained checkpoint, or where a
/// run stopped.
struct Start {
    preset_name: String,
    layout: Layout,
    params: Vec<f32>,
    opt: AdamW,
    seconds_before: f64,
    curve: Vec<CurvePoint>,
    /// The held-out figure of the checkpoint a resumed run starts from.
    best: Option<Best>,
}

fn start(opts: &TrainOptions) -> Result<Start, TrainError> {
    let fresh = |preset_name: String, layout: Layout, params: Vec<f32>| {
        let opt = AdamW::new(&layout, DEFAULT_SETTINGS);
        Start {
            preset_name,
            layout,
            params,
            opt,
            seconds_before: 0.0,
            curve: Vec::new(),
            best: None,
        }
    };
    let check_shape = |found: Dims, option: &'static str, path: &PathBuf| match &opts.shape {
        Some((dims, name)) if *dims != found => Err(TrainError::InvalidOption {
            option,
            reason: format!(
                "the shape asked for ({name}: {}) differs from {}'s ({}); \
                     leave out --config and --shape to take the checkpoint's",
                describe(dims),
                path.display(),
                describe(&found)
            ),
        }),
        _ => Ok(()),
    };
    match (&opts.resume, &opts.from) {
        (Some(_), Some(_)) => Err(TrainError::InvalidOption {
            option: "--from",
            reason: "give either --from (a new run from trained weights) or --resume (go on \
                     with a stopped run), not both"
                .into(),
        }),
        (None, None) => {
            let Some((dims, name)) = opts.shape.clone() else {
                return Err(TrainError::InvalidOption {
                    option: "--config",
                    reason: "a new model needs a shape".into(),
                });
            };
            let layout = Layout::new(dims);
            let params = init_params(&layout, &mut rand::rngs::StdRng::seed_from_u64(opts.seed));
            Ok(fresh(name, layout, params))
        }
        (None, Some(from)) => {
            let ckpt = read_checkpoint(from)?;
            check_shape(ckpt.dims, "--from", from)?;
            Ok(fresh(ckpt.config, Layout::new(ckpt.dims), ckpt.params))
        }
        (Some(resume), None) => {
            let ckpt = read_checkpoint(resume)?;
            check_shape(ckpt.dims, "--resume", resume)?;
            let layout = Layout::new(ckpt.dims);
            let opt_path = optimizer_path(resume);
            let state = read_optimizer(&opt_path, &layout, DEFAULT_SETTINGS)?;
            let params = match state.params {
                Some(p) => p,
                None if state.opt.step == ckpt.step => ckpt.params,
                None => {
                    return Err(TrainError::Metadata {
                        path: opt_path,
                        key: "step",
                        reason: format!(
                            "{} but the checkpoint is at step {}",
                            state.opt.step, ckpt.step
                        ),
                    })
                }
            };
            let curve = read_csv(&with_suffix(resume, ".loss.csv"), state.opt.step)?;
            // The checkpoint's own held-out figure, so a worse one later does not replace it.
            let best = curve
                .iter()
                .position(|p| p.step == ckpt.step && p.heldout_bpb.is_some())
                .map(|at| Best {
                    step: ckpt.step,
                    heldout: curve[at].heldout_bpb.unwrap_or(f64::INFINITY),
                    train_bits: recent_train_bits(&curve[..=at], 100),
                });
            Ok(Start {
                preset_name: ckpt.config,
                layout,
                params,
                opt: state.opt,
                seconds_before: state.seconds,
                curve,
                best,
            })
        }
    }
}

fn check_options(opts: &TrainOptions) -> Result<(), TrainError> {
    let bad = |option, reason: &str| {
        Err(TrainError::InvalidOption {
            option,
            reason: reason.into(),
        })
    };
    if opts.steps == 0 {
        return bad("--steps", "must be at least 1");
    }
    if opts.batch == 0 {
        return bad("--batch", "must be at least 1");
    }
    if opts.seq_len == 0 {
        return bad("--seq-len", "must be at least 1");
    }
    if !(opts.lr > 0.0 && opts.lr.is_finite()) {
        return bad("--lr", "must be a positive number");
    }
    if opts.checkpoint_every == 0 {
        return bad("--checkpoint-every", "must be at least 1");
    }
    if opts.threads == 0 {
        return bad("--threads", "must be at least 1");
    }
    if opts.seconds.is_some_and(|s| s.is_nan() || s <= 0.0) {
        return bad("--seconds", "must be positive");
    }
    Ok(())
}

/// Held-out bits per byte this much above the best, while the training loss is below
/// what it was at the best, is taken as memorising (common practice, no source).
const OVERFIT_MARGIN: f64 = 1.02;

/// The best held-out figure so far and what the training loss was then.
#[derive(Clone, Copy, Debug, PartialEq)]
struct Best {
    step: u64,
    heldout: f64,
    train_bits: f64,
}

/// What a new held-out figure means for the checkpoint.
#[derive(Debug, PartialEq)]
enum Verdict {
    /// The best so far: keep these parameters.
    Best,
    NotBetter,
    /// Held-out loss rose while training loss fell (said once per run).
    Memorising(Best),
}

/// Follows the held-out figures of a run.
#[derive(Default)]
struct HeldoutTracker {
    best: Option<Best>,
    warned: bool,
}

impl HeldoutTracker {
    fn record(&mut self, step: u64, heldout: f64, train_bits: f64) -> Verdict {
        match self.best {
            Some(b) if heldout >= b.heldout => {
                if !self.warned && heldout > b.heldout * OVERFIT_MARGIN && train_bits < b.train_bits
                {
                    self.warned = true;
                    Verdict::Memorising(b)
                } else {
                    Verdict::NotBetter
                }
            }
            _ => {
                self.best = Some(Best {
                    step,
                    heldout,
                    train_bits,
                });
                Verdict::Best
            }
        }
    }
}

/// Mean training loss in bits per byte over the last ≤ `n` steps of `curve`.
fn recent_train_bits(curve: &[CurvePoint], n: usize) -> f64 {
    let tail: Vec<f64> = curve.iter().rev().take(n).map(|p| p.train_nats).collect();
    if tail.is_empty() {
        return f64::NAN;
    }
    tail.iter().sum::<f64>() / tail.len() as f64 / std::f64::consts::LN_2
}

/// Trains on `corpus` until `opts.steps`, `opts.seconds` or `stop()` (asked before
/// each step). Every `checkpoint_every` steps and at the end it saves the resume state
/// (latest parameters and optimizer) and the loss curve; the checkpoint at `opts.out`
/// holds the parameters with the best held-out bits per byte seen (the latest ones when
/// nothing is held out), written whenever a held-out evaluation improves on it. Events go
/// to `events` as they happen.
pub fn train(
    corpus: &Corpus,
    opts: &TrainOptions,
    stop: &dyn Fn() -> bool,
    events: &dyn Progress,
) -> Result<TrainSummary, TrainError> {
    check_options(opts)?;
    let Start {
        preset_name,
        layout,
        mut params,
        mut opt,
        seconds_before,
        mut curve,
        best,
    } = start(opts)?;
    let window = opts.seq_len + 1;
    // Fail before any work if no window fits.
    corpus.sample_windows(&mut rand::rngs::StdRng::seed_from_u64(0), 1, window)?;
    let holdout = corpus.holdout_windows(window, MAX_HOLDOUT_WINDOWS);
    let mut workers = Workers::new(layout.dims, layout.len, opts.seq_len, opts.threads)?;
    let warmup = (opts.steps / 10).clamp(1, 100);
    let paths = (
        opts.out.clone(),
        optimizer_path(&opts.out),
        with_suffix(&opts.out, ".loss.csv"),
        with_suffix(&opts.out, ".loss.svg"),
    );
    // Fail before any work if the output folder cannot take a file.
    let folder = match paths.0.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_owned(),
        _ => PathBuf::from("."),
    };
    if !folder.is_dir() {
        return Err(TrainError::WriteFile {
            path: paths.0.clone(),
            source: std::io::Error::new(
                std::io::ErrorKind::NotFound,
                format!("the folder {} does not exist", folder.display()),
            ),
        });
    }
    let start_step = opt.step;
    events.started(start_step, opts.steps);
    let began = Instant::now();
    let mut last_heldout = curve.iter().rev().find_map(|p| p.heldout_bpb);
    let mut tracker = HeldoutTracker {
        best,
        warned: false,
    };
    let write_best = |params: &[f32], step: u64| -> Result<(), TrainError> {
        write_checkpoint(&paths.0, &layout, params, &preset_name, step)?;
        events.checkpoint_saved(step);
        Ok(())
    };
    let save_state = |params: &[f32],
                      opt: &AdamW,
                      curve: &[CurvePoint],
                      seconds: f64|
     -> Result<(), TrainError> {
        write_optimizer(&paths.1, &layout, params, opt, seconds)?;
        write_csv(&paths.2, curve)?;
        write_svg(&paths.3, curve)
    };
    // Keeps the checkpoint if `heldout` is the best, and warns once when held-out loss
    // rises while training loss falls.
    let observe = |tracker: &mut HeldoutTracker,
                   params: &[f32],
                   step: u64,
                   heldout: f64,
                   train_bits: f64|
     -> Result<(), TrainError> {
        match tracker.record(step, heldout, train_bits) {
            Verdict::Best => write_best(params, step),
            Verdict::NotBetter => Ok(()),
            Verdict::Memorising(b) => {
                events.memorising(&Memorising {
                    step,
                    heldout_bits_per_byte: heldout,
                    train_bits_per_byte: train_bits,
                    best_step: b.step,
                    best_heldout_bits_per_byte: b.heldout,
                    best_train_bits_per_byte: b.train_bits,
                });
                Ok(())
            }
        }
    };
    let mut interrupted = false;
    while opt.step < opts.steps {
        let elapsed = seconds_before + began.elapsed().as_secs_f64();
        if opts.seconds.is_some_and(|s| elapsed >= s) {
            break;
        }
        if stop() {
            interrupted = true;
            break;
        }
        let mut rng = rand::rngs::StdRng::seed_from_u64(step_seed(opts.seed, opt.step));
        let windows = corpus.sample_windows(&mut rng, opts.batch, window)?;
        let loss = workers.loss_and_gradient(&params, &layout, &windows);
        let grad = &mut workers.slots[0].1;
        clip_global_norm(grad, CLIP_NORM);
        let progress =
            (opt.step as f64 / opts.steps as f64).max(opts.seconds.map_or(0.0, |s| elapsed / s));
        let lr = learning_rate(opts.lr, opt.step, warmup, progress);
        opt.update(&mut params, grad, lr);
        let step = opt.step;
        let checkpoint_now = step % opts.checkpoint_every == 0;
        let heldout = (step % EVAL_EVERY == 0 || checkpoint_now)
            .then(|| workers.bits_per_byte(&params, &layout, &holdout))
            .flatten();
        curve.push(CurvePoint {
            step,
            train_nats: loss,
            heldout_bpb: heldout,
        });
        if let Some(h) = heldout {
            last_heldout = Some(h);
            observe(
                &mut tracker,
                &params,
                step,
                h,
                recent_train_bits(&curve, 100),
            )?;
        }
        let run_seconds = began.elapsed().as_secs_f64();
        let bytes_per_s =
            (step - start_step) as f64 * (opts.batch * opts.seq_len) as f64 / run_seconds.max(1e-9);
        let per_step = run_seconds / (step - start_step) as f64;
        let by_steps = (opts.steps - step) as f64 * per_step;
        let by_seconds = opts
            .seconds
            .map_or(f64::INFINITY, |s| s - seconds_before - run_seconds);
        events.step_done(&StepReport {
            step,
            train_bits_per_byte: loss / std::f64::consts::LN_2,
            heldout_bits_per_byte: last_heldout,
            bytes_per_second: bytes_per_s,
            eta_seconds: by_steps.min(by_seconds),
        });
        if checkpoint_now {
            if holdout.is_empty() {
                write_best(&params, step)?;
            }
            save_state(&params, &opt, &curve, seconds_before + run_seconds)?;
        }
    }
    let run_seconds = began.elapsed().as_secs_f64();
    let final_heldout = workers.bits_per_byte(&params, &layout, &holdout);
    if let (Some(last), Some(v)) = (curve.last_mut(), final_heldout) {
        last.heldout_bpb = Some(v);
    }
    let train_bits = recent_train_bits(&curve, 10);
    match final_heldout {
        // Equal to the last evaluation when the loop ended on an evaluated step.
        Some(h) if tracker.best.is_none_or(|b| b.step != opt.step) => observe(
            &mut tracker,
            &params,
            opt.step,
            h,
            recent_train_bits(&curve, 100),
        )?,
        Some(_) => {}
        None => write_best(&params, opt.step)?,
    }
    save_state(&params, &opt, &curve, seconds_before + run_seconds)?;
    let trained = opt.step - start_step;
    Ok(TrainSummary {
        steps: opt.step,
        seconds: run_seconds,
        final_train_bits_per_byte: train_bits,
        heldout_bits_per_byte: final_heldout,
        checkpoint_step: tracker.best.map_or(opt.step, |b| b.step),
        checkpoint_heldout_bits_per_byte: tracker.best.map(|b| b.heldout),
        overfitting_seen: tracker.warned,
        bytes_per_second: trained as f64 * (opts.batch * opts.seq_len) as f64
            / run_seconds.max(1e-9),
        interrupted,
        checkpoint: paths.0.clone(),
        optimizer_state: paths.1.clone(),
        loss_csv: paths.2.clone(),
        loss_svg: paths.3.clone(),
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn tracker_keeps_the_best_and_warns_once_on_memorising() {
        let mut t = HeldoutTracker::default();
        assert_eq!(t.record(100, 2.0, 3.0), Verdict::Best);
        assert_eq!(t.record(200, 1.5, 2.0), Verdict::Best);
        // Slightly worse, within the margin: not yet a warning.
        assert_eq!(t.record(300, 1.52, 1.5), Verdict::NotBetter);
        let best = Best {
            step: 200,
            heldout: 1.5,
            train_bits: 2.0,
        };
        assert_eq!(t.record(400, 1.7, 1.0), Verdict::Memorising(best));
        assert_eq!(t.record(500, 1.9, 0.5), Verdict::NotBetter);
        assert_eq!(t.record(600, 1.4, 0.4), Verdict::Best);
        assert_eq!(t.best.map(|b| b.step), Some(600));
    }
}

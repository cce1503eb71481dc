//! The training loop: batches over worker threads, AdamW steps, periodic
//! held-out evaluation, checkpoints, and a clean stop on request.

use std::path::PathBuf;
use std::time::Instant;

use indicatif::{ProgressBar, ProgressDrawTarget, ProgressStyle};
use rand::SeedableRng;
use rayon::prelude::*;

use super::adamw::{clip_global_norm, learning_rate, AdamW, DEFAULT_SETTINGS};
use super::batches::Corpus;
use super::checkpoint_file::{
    optimizer_path, read_checkpoint, read_optimizer, write_checkpoint, write_optimizer,
};
use super::config::{ModelDims, Preset};
use super::error::TrainError;
use super::forward_backward::{backward, forward, Workspace};
use super::loss_curve::{read_csv, with_suffix, write_csv, write_svg, CurvePoint};
use super::model_params::{init_params, Layout};

/// Held-out evaluation reads at most this many windows (bounded time).
pub const MAX_HOLDOUT_WINDOWS: usize = 64;
/// Held-out evaluation happens every this many steps (and at each checkpoint).
const EVAL_EVERY: u64 = 100;
/// Gradient clipping threshold on the global L2 norm (common practice, no source).
const CLIP_NORM: f32 = 1.0;

#[derive(Clone, Debug)]
pub struct TrainOptions {
    pub out: PathBuf,
    /// The preset for a new model; on resume it must match the checkpoint's if given.
    pub preset: Option<Preset>,
    pub untied_head: bool,
    /// Train until this step count (including steps of a resumed checkpoint).
    pub steps: u64,
    /// Stop after this much training wall time (including a resumed run's).
    pub seconds: Option<f64>,
    pub resume: Option<PathBuf>,
    pub batch: usize,
    pub seq_len: usize,
    pub lr: f32,
    pub seed: u64,
    pub checkpoint_every: u64,
    pub threads: usize,
    pub show_progress: bool,
}

#[derive(Clone, Debug, serde::Serialize)]
pub struct TrainSummary {
    pub steps: u64,
    /// Wall time of this run's training loop.
    pub seconds: f64,
    /// Mean training loss (nats per byte) over the last ≤ 10 steps.
    pub final_train_loss_nats: f64,
    pub heldout_bits_per_byte: Option<f64>,
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
    fn new(
        dims: ModelDims,
        len: usize,
        seq_len: usize,
        threads: usize,
    ) -> Result<Self, TrainError> {
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

/// Where a model starts: fresh from the preset, or from a checkpoint.
struct Start {
    preset_name: String,
    layout: Layout,
    params: Vec<f32>,
    opt: AdamW,
    seconds_before: f64,
    curve: Vec<CurvePoint>,
}

fn start(opts: &TrainOptions) -> Result<Start, TrainError> {
    let Some(resume) = &opts.resume else {
        let preset = opts.preset.unwrap_or(Preset::Small);
        let dims = ModelDims {
            tied: !opts.untied_head,
            ..preset.dims()
        };
        let layout = Layout::new(dims);
        let params = init_params(&layout, &mut rand::rngs::StdRng::seed_from_u64(opts.seed));
        let opt = AdamW::new(&layout, DEFAULT_SETTINGS);
        return Ok(Start {
            preset_name: preset.name().into(),
            layout,
            params,
            opt,
            seconds_before: 0.0,
            curve: Vec::new(),
        });
    };
    let ckpt = read_checkpoint(resume)?;
    if let Some(p) = opts.preset {
        if p.name() != ckpt.config {
            return Err(TrainError::InvalidOption {
                option: "--config",
                reason: format!(
                    "{p} differs from the checkpoint {}'s config {:?}",
                    resume.display(),
                    ckpt.config
                ),
            });
        }
    }
    let layout = Layout::new(ckpt.dims);
    let opt_path = optimizer_path(resume);
    let (opt, seconds_before) = read_optimizer(&opt_path, &layout, DEFAULT_SETTINGS)?;
    if opt.step != ckpt.step {
        return Err(TrainError::Metadata {
            path: opt_path,
            key: "step",
            reason: format!("{} but the checkpoint is at step {}", opt.step, ckpt.step),
        });
    }
    let curve = read_csv(&with_suffix(resume, ".loss.csv"), ckpt.step)?;
    Ok(Start {
        preset_name: ckpt.config,
        layout,
        params: ckpt.params,
        opt,
        seconds_before,
        curve,
    })
}

fn check_options(opts: &TrainOptions) -> Result<(), TrainError> {
    let bad = |option, reason: &str| {
        Err(TrainError::InvalidOption {
            option,
            reason: reason.into(),
        })
    };
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

/// Trains on `corpus` until `opts.steps`, `opts.seconds` or `stop()` (asked before
/// each step), saving the checkpoint, optimizer state and loss curve every
/// `checkpoint_every` steps and at the end.
pub fn train(
    corpus: &Corpus,
    opts: &TrainOptions,
    stop: &dyn Fn() -> bool,
) -> Result<TrainSummary, TrainError> {
    check_options(opts)?;
    let Start {
        preset_name,
        layout,
        mut params,
        mut opt,
        seconds_before,
        mut curve,
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
    let start_step = opt.step;
    let bar = if opts.show_progress {
        ProgressBar::with_draw_target(Some(opts.steps), ProgressDrawTarget::stderr())
    } else {
        ProgressBar::hidden()
    };
    bar.set_style(
        ProgressStyle::with_template("{elapsed_precise} [{bar:30}] step {pos}/{len} {msg}")
            .unwrap_or_else(|_| ProgressStyle::default_bar()),
    );
    bar.set_position(start_step);
    let began = Instant::now();
    let mut last_heldout = curve.iter().rev().find_map(|p| p.heldout_bpb);
    let save = |params: &[f32],
                opt: &AdamW,
                curve: &[CurvePoint],
                seconds: f64|
     -> Result<(), TrainError> {
        write_checkpoint(&paths.0, &layout, params, &preset_name, opt.step)?;
        write_optimizer(&paths.1, &layout, opt, seconds)?;
        write_csv(&paths.2, curve)?;
        write_svg(&paths.3, curve)
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
        if heldout.is_some() {
            last_heldout = heldout;
        }
        curve.push(CurvePoint {
            step,
            train_nats: loss,
            heldout_bpb: heldout,
        });
        let run_seconds = began.elapsed().as_secs_f64();
        let bytes_per_s =
            (step - start_step) as f64 * (opts.batch * opts.seq_len) as f64 / run_seconds.max(1e-9);
        let held = last_heldout.map_or("-".to_string(), |v| format!("{v:.3}"));
        bar.set_message(format!(
            "loss {loss:.3} nats, held-out {held} bits/byte, {bytes_per_s:.0} B/s"
        ));
        bar.set_position(step);
        if checkpoint_now {
            save(&params, &opt, &curve, seconds_before + run_seconds)?;
        }
    }
    let run_seconds = began.elapsed().as_secs_f64();
    let final_heldout = workers.bits_per_byte(&params, &layout, &holdout);
    if let (Some(last), Some(v)) = (curve.last_mut(), final_heldout) {
        last.heldout_bpb = Some(v);
    }
    save(&params, &opt, &curve, seconds_before + run_seconds)?;
    bar.finish_and_clear();
    let tail: Vec<f64> = curve.iter().rev().take(10).map(|p| p.train_nats).collect();
    let trained = opt.step - start_step;
    Ok(TrainSummary {
        steps: opt.step,
        seconds: run_seconds,
        final_train_loss_nats: if tail.is_empty() {
            f64::NAN
        } else {
            tail.iter().sum::<f64>() / tail.len() as f64
        },
        heldout_bits_per_byte: final_heldout,
        bytes_per_second: trained as f64 * (opts.batch * opts.seq_len) as f64
            / run_seconds.max(1e-9),
        interrupted,
        checkpoint: paths.0.clone(),
        optimizer_state: paths.1.clone(),
        loss_csv: paths.2.clone(),
        loss_svg: paths.3.clone(),
    })
}

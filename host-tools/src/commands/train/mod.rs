//! `inkling train`: command-line options and the run that prints the outcome.

use std::path::PathBuf;
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::OnceLock;

use inkling_core::Dims;
use inkling_train::batches::{Corpus, CorpusFile, Holdout};
use inkling_train::{train, TrainError, TrainOptions};

mod progress_bar;
mod shape;

use progress_bar::StepBar;
use shape::parse_shape;
pub use shape::Preset;

/// Train a byte-level model on raw-byte corpus files (CPU).
#[derive(Clone, Debug, clap::Args)]
pub struct TrainArgs {
    /// Corpus files (raw bytes), each `PATH` or `PATH@WEIGHT` (its bytes drawn WEIGHT
    /// times as often as a weight-1 file's); the tail of each is held out (--holdout).
    #[arg(required = true, value_parser = CorpusFile::parse, value_name = "FILE[@WEIGHT]")]
    pub corpus: Vec<CorpusFile>,
    /// Checkpoint to write (safetensors): the parameters with the best held-out bits per
    /// byte. The resume state (latest parameters, optimizer) and the loss curve go beside
    /// it. Defaults to the --resume checkpoint.
    #[arg(long, value_name = "CKPT", required_unless_present = "resume")]
    pub out: Option<PathBuf>,
    /// Model size preset [default: small]; on --resume it must match the checkpoint.
    #[arg(long, value_enum)]
    pub config: Option<Preset>,
    /// Dimensions that replace the preset's, as name=value pairs (blocks, d, i, n, k, r),
    /// e.g. `--shape blocks=2,d=104,i=160`; `inkling budget` lists shapes that fit a part.
    #[arg(long, value_name = "DIMS")]
    pub shape: Option<String>,
    /// Give the model its own output matrix instead of reusing byte_embed.
    #[arg(long)]
    pub untied_head: bool,
    /// Train until this many steps in total (a resumed run counts its earlier steps).
    #[arg(long, default_value_t = 2000)]
    pub steps: u64,
    /// Also stop after this many seconds of training; the learning-rate schedule
    /// then follows whichever of steps and seconds runs out first.
    #[arg(long)]
    pub seconds: Option<f64>,
    /// Continue a stopped run from this checkpoint's `<CKPT>.adamw.safetensors`.
    #[arg(long, value_name = "CKPT")]
    pub resume: Option<PathBuf>,
    /// Fine-tune: start from this trained checkpoint's weights with a fresh optimizer and
    /// learning-rate schedule (--steps counts from 0). Its shape must match --config/--shape
    /// if given.
    #[arg(long, value_name = "CKPT", conflicts_with = "resume")]
    pub from: Option<PathBuf>,
    /// Fraction of each corpus file kept out of training for held-out bits per byte.
    #[arg(long, default_value_t = 0.01)]
    pub holdout: f64,
    /// ... but at least this many bytes of each file (at most half of it).
    #[arg(long, default_value_t = 2048, value_name = "BYTES")]
    pub holdout_min_bytes: usize,
    /// Sequences per step.
    #[arg(long, default_value_t = 16)]
    pub batch: usize,
    /// Predicted bytes per sequence.
    #[arg(long, default_value_t = 256)]
    pub seq_len: usize,
    /// Peak learning rate (after warm-up; cosine decay to a tenth of it).
    #[arg(long, default_value_t = 3e-3)]
    pub lr: f32,
    /// Seed of the initial weights and of the batch order.
    #[arg(long, default_value_t = 1)]
    pub seed: u64,
    /// Save checkpoint, optimizer state and loss curve every this many steps.
    #[arg(long, default_value_t = 200)]
    pub checkpoint_every: u64,
    /// Worker threads [default: all cores].
    #[arg(long)]
    pub threads: Option<usize>,
    /// Print one JSON object with the outcome on stdout.
    #[arg(long)]
    pub json: bool,
}

/// Set by Ctrl-C; the loop finishes its step, saves and stops.
static STOP: AtomicBool = AtomicBool::new(false);

fn install_ctrl_c() -> Result<(), TrainError> {
    static INSTALLED: OnceLock<Result<(), String>> = OnceLock::new();
    INSTALLED
        .get_or_init(|| {
            ctrlc::set_handler(|| STOP.store(true, Ordering::SeqCst)).map_err(|e| e.to_string())
        })
        .clone()
        .map_err(TrainError::CtrlC)
}

/// The new model's shape from `--config`, `--shape` and `--untied-head`; `None`
/// when none is given with `--resume` or `--from` (the checkpoint's shape), `small`
/// when none is given for a new model.
fn shape(args: &TrainArgs) -> Result<Option<(Dims, String)>, TrainError> {
    let given = args.config.is_some() || args.shape.is_some() || args.untied_head;
    if !given && (args.resume.is_some() || args.from.is_some()) {
        return Ok(None);
    }
    let preset = args.config.unwrap_or(Preset::Small);
    let mut dims = preset.dims();
    let mut name = preset.name().to_string();
    if let Some(spec) = &args.shape {
        dims = parse_shape(dims, spec).map_err(|reason| TrainError::InvalidOption {
            option: "--shape",
            reason,
        })?;
        if dims != preset.dims() {
            name = "custom".into();
        }
    }
    dims.tied_head = !args.untied_head;
    Ok(Some((dims, name)))
}

pub fn run(args: &TrainArgs) -> Result<(), TrainError> {
    let Some(out) = args.out.clone().or_else(|| args.resume.clone()) else {
        return Err(TrainError::InvalidOption {
            option: "--out",
            reason: "required without --resume".into(),
        });
    };
    install_ctrl_c()?;
    let threads = args
        .threads
        .unwrap_or_else(|| std::thread::available_parallelism().map_or(1, |n| n.get()));
    let opts = TrainOptions {
        out,
        shape: shape(args)?,
        steps: args.steps,
        seconds: args.seconds,
        resume: args.resume.clone(),
        from: args.from.clone(),
        batch: args.batch,
        seq_len: args.seq_len,
        lr: args.lr,
        seed: args.seed,
        checkpoint_every: args.checkpoint_every,
        threads,
    };
    let holdout = Holdout {
        fraction: args.holdout,
        min_bytes: args.holdout_min_bytes,
    };
    let corpus = Corpus::load(&args.corpus, holdout)?;
    eprintln!(
        "training on {} bytes, {} held out, {threads} threads",
        corpus.train_bytes(),
        corpus.holdout_bytes()
    );
    let bar = StepBar::new(opts.steps);
    let summary = train(&corpus, &opts, &|| STOP.load(Ordering::SeqCst), &bar)?;
    bar.finish();
    if summary.interrupted {
        eprintln!(
            "interrupted: saved step {} to {}",
            summary.steps,
            summary.checkpoint.display()
        );
    }
    if args.json {
        println!("{}", serde_json::to_string(&summary).unwrap_or_default());
    } else {
        let bits = |v: Option<f64>| v.map_or("-".into(), |v| format!("{v:.3}"));
        println!(
            "step {}: train {:.3} bits/byte, held-out {} bits/byte, {:.0} bytes/s over {:.1} s\n\
             checkpoint: step {} (held-out {} bits/byte, the best seen)\n\
             wrote {}, {}, {}, {}",
            summary.steps,
            summary.final_train_bits_per_byte,
            bits(summary.heldout_bits_per_byte),
            summary.bytes_per_second,
            summary.seconds,
            summary.checkpoint_step,
            bits(summary.checkpoint_heldout_bits_per_byte),
            summary.checkpoint.display(),
            summary.optimizer_state.display(),
            summary.loss_csv.display(),
            summary.loss_svg.display()
        );
    }
    Ok(())
}

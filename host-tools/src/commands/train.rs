//! `inkling train`: command-line options and the run that prints the outcome.

use std::path::PathBuf;
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::OnceLock;

use crate::train::batches::Corpus;
use crate::train::{train, Preset, TrainError, TrainOptions};

/// Train a byte-level model on raw-byte corpus files (CPU).
#[derive(Clone, Debug, clap::Args)]
pub struct TrainArgs {
    /// Corpus files (raw bytes); the last --holdout fraction of each is held out.
    #[arg(required = true)]
    pub corpus: Vec<PathBuf>,
    /// Checkpoint to write (safetensors); optimizer state and loss curve go beside it.
    /// Defaults to the --resume checkpoint.
    #[arg(long, value_name = "CKPT", required_unless_present = "resume")]
    pub out: Option<PathBuf>,
    /// Model size preset [default: small]; on --resume it must match the checkpoint.
    #[arg(long, value_enum)]
    pub config: Option<Preset>,
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
    /// Continue from this checkpoint and its `<CKPT>.adamw.safetensors`.
    #[arg(long, value_name = "CKPT")]
    pub resume: Option<PathBuf>,
    /// Fraction of each corpus file kept out of training for held-out bits per byte.
    #[arg(long, default_value_t = 0.01)]
    pub holdout: f64,
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
        preset: args.config,
        untied_head: args.untied_head,
        steps: args.steps,
        seconds: args.seconds,
        resume: args.resume.clone(),
        batch: args.batch,
        seq_len: args.seq_len,
        lr: args.lr,
        seed: args.seed,
        checkpoint_every: args.checkpoint_every,
        threads,
        show_progress: true,
    };
    let corpus = Corpus::load(&args.corpus, args.holdout)?;
    eprintln!(
        "training on {} bytes, {} held out, {threads} threads",
        corpus.train_bytes(),
        corpus.holdout_bytes()
    );
    let summary = train(&corpus, &opts, &|| STOP.load(Ordering::SeqCst))?;
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
        let held = summary
            .heldout_bits_per_byte
            .map_or("-".into(), |v| format!("{v:.3}"));
        println!(
            "step {}: train loss {:.3} nats/byte, held-out {held} bits/byte, {:.0} bytes/s over {:.1} s\nwrote {}, {}, {}, {}",
            summary.steps,
            summary.final_train_loss_nats,
            summary.bytes_per_second,
            summary.seconds,
            summary.checkpoint.display(),
            summary.optimizer_state.display(),
            summary.loss_csv.display(),
            summary.loss_svg.display()
        );
    }
    Ok(())
}

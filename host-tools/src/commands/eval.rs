//! `inkling eval`: bits per byte of a text, optionally beside another model, and with
//! `--savings` the keystroke savings of word completion on it against a word-frequency
//! baseline.
//!
//! Keystroke savings (Trnka & McCoy 2008, "Evaluating Word Prediction: Framing Keystroke
//! Savings", ACL-08): KS = (keys letter by letter − keys with prediction) / keys letter by
//! letter, for a writer who takes a suggestion with one key as soon as it is exactly the word
//! being typed. The headline figure counts the selection key and inserts no space after a
//! taken word; the other framings are reported beside it. See
//! [`keystroke_savings`](crate::keystroke_savings) for the simulation.

use std::path::{Path, PathBuf};

use indicatif::{ProgressBar, ProgressStyle};
use inkling_core::session::{SearchOptions, DEFAULT_MARGIN, DEFAULT_MAX_STEPS};

use super::suggest::MAX_COUNT;
use crate::error::HostError;
use crate::keystroke_savings::simulation::whole_words;
use crate::keystroke_savings::{compare, Comparison, FrequencyBaseline};
use crate::model_file::ModelFile;
use crate::text_scoring::bits_per_byte;

/// Arguments of `inkling eval`.
#[derive(Debug, clap::Args)]
pub struct EvalArgs {
    /// An image (int8 engine) or a checkpoint (float engine).
    pub model: PathBuf,
    /// The text file to score.
    #[arg(long)]
    pub text: PathBuf,
    /// A second model scored on the same text (e.g. a checkpoint against its image).
    #[arg(long)]
    pub against: Option<PathBuf>,
    /// Print one JSON object.
    #[arg(long)]
    pub json: bool,
    /// Also simulate a writer who takes a suggestion as soon as it is the word being typed,
    /// and report the keystroke savings of the model and of the baseline.
    #[arg(long)]
    pub savings: bool,
    /// Suggestions shown at each key (for --savings), at most 16.
    #[arg(long, default_value_t = 3, requires = "savings")]
    pub count: usize,
    /// The word-frequency source of the baseline (for --savings): a text other than --text,
    /// e.g. the training text. It offers its most frequent words that fit the typed prefix.
    #[arg(long, requires = "savings")]
    pub baseline_corpus: Option<PathBuf>,
    /// Bytes of --text to type for --savings (cut back to a word boundary): the model takes
    /// a search, up to --max-steps engine steps, per key.
    #[arg(long, default_value_t = 5000, requires = "savings")]
    pub max_bytes: usize,
    /// Engine steps each search may take (for --savings).
    #[arg(long, default_value_t = DEFAULT_MAX_STEPS, requires = "savings")]
    pub max_steps: usize,
    /// How far below the best a word may score and still be followed, in nats (for
    /// --savings; `inf` follows every word that could still be offered).
    #[arg(long, default_value_t = DEFAULT_MARGIN, requires = "savings")]
    pub margin: f32,
}

fn score(path: &Path, text: &[u8], label: &str) -> Result<(f64, &'static str), HostError> {
    let file = ModelFile::open(path)?;
    let bar = ProgressBar::new(text.len() as u64);
    bar.set_style(
        ProgressStyle::with_template("{msg} [{bar:30}] {pos}/{len} bytes ({per_sec}, {eta})")
            .unwrap_or_else(|_| ProgressStyle::default_bar()),
    );
    bar.set_message(label.to_string());
    if text.len() < 100_000 {
        bar.set_draw_target(indicatif::ProgressDrawTarget::hidden());
    }
    let bpb = file.with_weights(|w| bits_per_byte(w, text, |i| bar.set_position(i as u64)));
    bar.finish_and_clear();
    Ok((bpb, file.engine_name()))
}

/// The keystroke savings of `args.model` and of the baseline on the start of `text`.
fn savings(args: &EvalArgs, text: &[u8]) -> Result<Comparison, HostError> {
    if args.count > MAX_COUNT {
        return Err(HostError::Usage(format!(
            "--count {} is more than the {MAX_COUNT} a session holds",
            args.count
        )));
    }
    let corpus_path = args.baseline_corpus.as_ref().ok_or_else(|| {
        HostError::Usage(
            "--savings needs --baseline-corpus FILE: the baseline's word counts must come \
             from a text other than --text (e.g. the training text)"
                .into(),
        )
    })?;
    let same = |a: &Path, b: &Path| match (a.canonicalize(), b.canonicalize()) {
        (Ok(a), Ok(b)) => a == b,
        _ => false,
    };
    if same(corpus_path, &args.text) {
        return Err(HostError::Usage(format!(
            "--baseline-corpus {}: is the --text file itself; a baseline that has counted \
             the text it is scored on would be cheating",
            corpus_path.display()
        )));
    }
    let corpus = std::fs::read(corpus_path).map_err(HostError::io(corpus_path))?;
    let mut baseline = FrequencyBaseline::from_corpus(&corpus);
    let text = whole_words(text, args.max_bytes);
    let file = ModelFile::open(&args.model)?;
    let bar = ProgressBar::new(text.len() as u64);
    bar.set_style(
        ProgressStyle::with_template("keystrokes [{bar:30}] {pos}/{len} bytes ({eta})")
            .unwrap_or_else(|_| ProgressStyle::default_bar()),
    );
    let found = file.with_weights(|w| {
        let search = SearchOptions {
            max_steps: args.max_steps,
            margin: args.margin,
            ..SearchOptions::new(args.count)
        };
        compare(w, &mut baseline, text, args.count, search, |at| {
            bar.set_position(at as u64)
        })
    });
    bar.finish_and_clear();
    found.map_err(|source| HostError::Image {
        path: args.model.clone(),
        source,
    })
}

/// Runs `inkling eval`.
pub fn run(args: &EvalArgs) -> Result<(), HostError> {
    let text = std::fs::read(&args.text).map_err(HostError::io(&args.text))?;
    if text.len() < 2 {
        return Err(HostError::Usage(format!(
            "{}: needs at least 2 bytes to score",
            args.text.display()
        )));
    }
    let (bpb, engine) = score(&args.model, &text, "model")?;
    let other = match &args.against {
        Some(p) => Some((p, score(p, &text, "against")?)),
        None => None,
    };
    let savings = args.savings.then(|| savings(args, &text)).transpose()?;
    if args.json {
        let mut v = serde_json::json!({
            "model": args.model,
            "engine": engine,
            "text": args.text,
            "bytes": text.len(),
            "bits_per_byte": bpb,
        });
        if let Some((p, (obpb, oengine))) = &other {
            v["against"] = serde_json::json!({
                "model": p, "engine": oengine, "bits_per_byte": obpb,
            });
            v["difference"] = serde_json::json!(bpb - obpb);
            v["relative_difference"] = serde_json::json!((bpb - obpb) / obpb);
        }
        if let (Some(found), Some(corpus)) = (&savings, &args.baseline_corpus) {
            let mut ks = found.to_json();
            ks["baseline_corpus"] = serde_json::json!(corpus);
            v["keystroke_savings"] = ks;
        }
        println!("{v}");
    } else {
        println!(
            "{} ({engine}): {bpb:.4} bits per byte on {} bytes",
            args.model.display(),
            text.len()
        );
        if let Some((p, (obpb, oengine))) = &other {
            println!("{} ({oengine}): {obpb:.4} bits per byte", p.display());
            println!(
                "difference: {:+.4} bits per byte ({:+.2}%)",
                bpb - obpb,
                100.0 * (bpb - obpb) / obpb
            );
        }
        if let Some(found) = &savings {
            found.print();
        }
    }
    Ok(())
}

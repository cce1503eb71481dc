//! `inkling eval`: bits per byte of a text, optionally beside another model.

use std::path::{Path, PathBuf};

use indicatif::{ProgressBar, ProgressStyle};

use crate::error::HostError;
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
    }
    Ok(())
}

//! `inkling next`: the distribution of the byte that follows a text.

use std::path::PathBuf;

use crate::error::HostError;
use crate::model_file::ModelFile;
use crate::text_scoring::{log_softmax, HostEngine};

/// Arguments of `inkling next`.
#[derive(Debug, clap::Args)]
pub struct NextArgs {
    /// An image (int8 engine) or a checkpoint (float engine).
    pub model: PathBuf,
    /// The text before the byte to predict (at least one byte).
    #[arg(long)]
    pub text: String,
    /// Also give the logits after every byte of the text.
    #[arg(long)]
    pub all_positions: bool,
    /// How many of the most likely bytes to list in the text output.
    #[arg(long, default_value_t = 5)]
    pub top: usize,
    /// Print one JSON object.
    #[arg(long)]
    pub json: bool,
}

/// A byte as the text output shows it: an ASCII character quoted (`'a'`, `'\n'`); any other
/// byte as its hex escape and what it is in UTF-8 (RFC 3629), never as the Latin-1 letter
/// of the same number.
fn shown_byte(byte: u8) -> String {
    match byte {
        0x00..=0x7F => format!("{:?}", char::from(byte)),
        0x80..=0xBF => format!("\\x{byte:02X} (continues a UTF-8 character)"),
        0xC2..=0xDF => format!("\\x{byte:02X} (starts a 2-byte UTF-8 character)"),
        0xE0..=0xEF => format!("\\x{byte:02X} (starts a 3-byte UTF-8 character)"),
        0xF0..=0xF4 => format!("\\x{byte:02X} (starts a 4-byte UTF-8 character)"),
        _ => format!("\\x{byte:02X} (never in UTF-8)"),
    }
}

/// Runs `inkling next`.
pub fn run(args: &NextArgs) -> Result<(), HostError> {
    if args.text.is_empty() {
        return Err(HostError::Usage(
            "--text must hold at least one byte".into(),
        ));
    }
    let file = ModelFile::open(&args.model)?;
    let (logits, per_position) = file.with_weights(|w| {
        let mut engine = HostEngine::new(w);
        let mut per_position = Vec::new();
        let mut last = Vec::new();
        for &b in args.text.as_bytes() {
            last = engine.step(w, b).to_vec();
            if args.all_positions {
                per_position.push(last.clone());
            }
        }
        (last, per_position)
    });
    let logp = log_softmax(&logits);
    let mut order: Vec<usize> = (0..256).collect();
    order.sort_by(|&a, &b| logp[b].total_cmp(&logp[a]));
    if args.json {
        let top: Vec<_> = order
            .iter()
            .take(args.top)
            .map(|&b| serde_json::json!({"byte": b, "logprob": logp[b]}))
            .collect();
        let mut v = serde_json::json!({
            "engine": file.engine_name(),
            "logits": logits,
            "top": top,
        });
        if args.all_positions {
            v["per_position"] = serde_json::json!(per_position);
        }
        println!("{v}");
    } else {
        for &b in order.iter().take(args.top) {
            println!("{:>8.4}  {}", logp[b].exp(), shown_byte(b as u8));
        }
    }
    Ok(())
}

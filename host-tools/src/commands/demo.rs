//! `inkling demo`: the bundled demo model, end to end, with no download.

use std::io::Write;
use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};

use inkling_core::Model;

use crate::error::HostError;
use crate::model_file::ModelFile;
use crate::text_scoring::{bits_per_byte, log_softmax, HostEngine};

/// Where the repository keeps the demo model and its held-out text.
fn repo_path(rel: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("..").join(rel)
}

/// Arguments of `inkling demo`.
#[derive(Debug, clap::Args)]
pub struct DemoArgs {
    /// The demo image.
    #[arg(long, default_value_os_t = repo_path("models/demo.inkl"))]
    pub image: PathBuf,
    /// The float checkpoint the image was converted from.
    #[arg(long, default_value_os_t = repo_path("models/demo.safetensors"))]
    pub checkpoint: PathBuf,
    /// Bytes of each held-out text to score (the model and the compressors see the same slice).
    #[arg(long, default_value_t = 20_000)]
    pub eval_bytes: usize,
    /// Print one JSON object.
    #[arg(long)]
    pub json: bool,
}

/// The held-out texts the demo scores: never seen in training.
const HELD_OUT: [(&str, &str); 2] = [
    (
        "open text (King James Bible, held-out books)",
        "data/open/kjv-heldout.txt",
    ),
    (
        "scenario text (hut wardens' pager messages)",
        "data/scenario/heldout.txt",
    ),
];

/// Prompts the demo model continues.
const PROMPTS: [&str; 4] = [
    "And the LORD said unto ",
    "Supplies for the hut ",
    "Path closed between ",
    "Weather: ",
];

/// Bits per byte of `text` compressed by `program args` (run as a separate process), if it runs.
fn compressed_bits_per_byte(program: &str, args: &[&str], text: &[u8]) -> Option<f64> {
    let mut child = Command::new(program)
        .args(args)
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .stderr(Stdio::null())
        .spawn()
        .ok()?;
    let mut stdin = child.stdin.take()?;
    let input = text.to_vec();
    let writer = std::thread::spawn(move || stdin.write_all(&input));
    let out = child.wait_with_output().ok()?;
    writer.join().ok()?.ok()?;
    out.status
        .success()
        .then(|| 8.0 * out.stdout.len() as f64 / text.len() as f64)
}

/// The model's greedy continuation of `prompt`, `len` bytes long.
fn continue_greedily(file: &ModelFile, prompt: &str, len: usize) -> String {
    file.with_weights(|w| {
        let mut engine = HostEngine::new(w);
        let mut logits = Vec::new();
        for &b in prompt.as_bytes() {
            logits = engine.step(w, b).to_vec();
        }
        let mut out = Vec::new();
        for _ in 0..len {
            let lp = log_softmax(&logits);
            let best = (0..256)
                .max_by(|&a, &b| lp[a].total_cmp(&lp[b]))
                .unwrap_or(b' ' as usize) as u8;
            if best == b'\n' {
                break;
            }
            out.push(best);
            logits = engine.step(w, best).to_vec();
        }
        String::from_utf8_lossy(&out).into_owned()
    })
}

/// Runs `inkling demo`.
pub fn run(args: &DemoArgs) -> Result<(), HostError> {
    let image = ModelFile::open(&args.image)?;
    let float = ModelFile::open(&args.checkpoint)?;
    let bytes = std::fs::read(&args.image).map_err(HostError::io(&args.image))?;
    let model = Model::from_bytes(&bytes).map_err(|source| HostError::Image {
        path: args.image.clone(),
        source,
    })?;
    let d = *model.dims();
    let mut report = serde_json::json!({
        "image": args.image,
        "flash_bytes": model.flash_bytes(),
        "state_bytes": d.state_bytes(),
        "scratch_bytes": d.scratch_bytes(),
        "session_bytes_3_suggestions": crate::commands::session_ram(&d, 3),
    });
    if !args.json {
        println!("== the demo model: {}", args.image.display());
        println!(
            "{} blocks, d_model {}, d_inner {}, d_state {}; flash {} bytes; RAM {} bytes of state, {} of scratch, {} for a typing session with 3 suggestions",
            d.blocks, d.d_model, d.d_inner, d.d_state, model.flash_bytes(), d.state_bytes(), d.scratch_bytes(),
            crate::commands::session_ram(&d, 3)
        );
        println!(
            "\n== bits per byte on held-out text (lower is better; first {} bytes of each)",
            args.eval_bytes
        );
        println!(
            "{:<46} {:>8} {:>8} {:>8} {:>8}",
            "text", "float", "int8", "gzip -9", "xz -9e"
        );
    }
    let mut scores = Vec::new();
    for (label, rel) in HELD_OUT {
        let path = repo_path(rel);
        let text = std::fs::read(&path).map_err(HostError::io(&path))?;
        let text = &text[..text.len().min(args.eval_bytes)];
        let f = float.with_weights(|w| bits_per_byte(w, text, |_| {}));
        let q = image.with_weights(|w| bits_per_byte(w, text, |_| {}));
        let gz = compressed_bits_per_byte("gzip", &["-9", "-c"], text);
        let xz = compressed_bits_per_byte("xz", &["-9e", "-c"], text);
        let show = |v: Option<f64>| v.map_or("n/a".to_string(), |v| format!("{v:.3}"));
        if !args.json {
            println!(
                "{:<46} {:>8.3} {:>8.3} {:>8} {:>8}",
                label,
                f,
                q,
                show(gz),
                show(xz)
            );
        }
        scores.push(serde_json::json!({
            "text": rel, "bytes": text.len(), "float_bits_per_byte": f, "int8_bits_per_byte": q,
            "int8_cost_percent": 100.0 * (q - f) / f, "gzip_9": gz, "xz_9e": xz,
        }));
    }
    report["held_out"] = serde_json::json!(scores);
    if !args.json {
        println!("\n== the int8 model continues a few prompts (greedy)");
    }
    let mut continuations = Vec::new();
    for p in PROMPTS {
        let c = continue_greedily(&image, p, 48);
        if !args.json {
            println!("  {p}[{c}]");
        }
        continuations.push(serde_json::json!({"prompt": p, "continuation": c}));
    }
    report["continuations"] = serde_json::json!(continuations);
    if args.json {
        println!("{report}");
    }
    Ok(())
}

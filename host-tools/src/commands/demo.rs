//! `inkling demo`: the bundled demo model, end to end, with no download.

use std::path::{Path, PathBuf};

use inkling_core::session::{KeyMap, SearchOptions, DEFAULT_HISTORY};

use super::suggest::MAX_COUNT;
use crate::compressors::{self, YARDSTICKS};
use crate::error::HostError;
use crate::keystroke_savings::simulation::whole_words;
use crate::keystroke_savings::{
    compare, session_memory, simulate_with, FrequencyBaseline, ModelPredictor, Offer,
};
use crate::model_file::{image_model, ModelFile};
use crate::text_scoring::{bits_per_byte, log_softmax, HostEngine};

/// Where the repository keeps the demo model and its held-out text.
fn repo_path(rel: impl AsRef<Path>) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("..").join(rel)
}

/// A path given relative to the project (the defaults, as `--help` shows them): as given if
/// it exists from here, else in the repository this program was built from.
fn project_path(path: &Path) -> PathBuf {
    if path.is_relative() && !path.exists() && repo_path(path).exists() {
        repo_path(path)
    } else {
        path.to_path_buf()
    }
}

/// Text both engines read to tell whether a checkpoint is the image's own model.
const SAME_MODEL_PROBE: &[u8] =
    b"Base, this is Tamsel Hut. Fresh snow overnight, wind from the north. Over.\n";

/// The largest mean total variation distance between the next-byte distributions of an image
/// and its own checkpoint over [`SAME_MODEL_PROBE`] (common practice, no source: int8
/// conversion moves each distribution by a few hundredths; another model, by far more).
const SAME_MODEL_DISTANCE: f64 = 0.2;

/// Refuses a checkpoint that is not the model the image was converted from: other
/// dimensions, or next-byte distributions further apart than [`SAME_MODEL_DISTANCE`].
fn check_same_model(
    image: &ModelFile,
    float: &ModelFile,
    args: &DemoArgs,
) -> Result<(), HostError> {
    let refuse = |why: String| {
        HostError::Usage(format!(
            "--checkpoint {} is not the model of --image {}: {why}; give the checkpoint the image \
         was converted from",
            args.checkpoint.display(),
            args.image.display()
        ))
    };
    if float.image_bytes().is_some() {
        return Err(refuse("it is an image, not a float checkpoint".into()));
    }
    let (di, df) = (image.dims(), float.dims());
    if di.d_model != df.d_model
        || di.d_inner != df.d_inner
        || di.d_state != df.d_state
        || di.d_conv != df.d_conv
        || di.dt_rank != df.dt_rank
        || di.blocks != df.blocks
        || di.tied_head != df.tied_head
    {
        return Err(refuse(format!(
            "its shape differs (blocks {} vs {}, d_model {} vs {}, d_inner {} vs {}, d_state {} vs {})",
            df.blocks, di.blocks, df.d_model, di.d_model, df.d_inner, di.d_inner, df.d_state, di.d_state
        )));
    }
    let distributions = |file: &ModelFile| -> Vec<Vec<f64>> {
        file.with_weights(|w| {
            let mut engine = HostEngine::new(w);
            SAME_MODEL_PROBE
                .iter()
                .map(|&b| {
                    log_softmax(engine.step(w, b))
                        .iter()
                        .map(|l| l.exp())
                        .collect()
                })
                .collect()
        })
    };
    let (p, q) = (distributions(image), distributions(float));
    let distance = p
        .iter()
        .zip(&q)
        .map(|(a, b)| 0.5 * a.iter().zip(b).map(|(x, y)| (x - y).abs()).sum::<f64>())
        .sum::<f64>()
        / p.len() as f64;
    if distance > SAME_MODEL_DISTANCE {
        return Err(refuse(format!(
            "its next-byte distributions differ from the image's by {distance:.2} on average \
             (total variation; the same model converted differs by a few hundredths)"
        )));
    }
    Ok(())
}

/// Arguments of `inkling demo`.
#[derive(Debug, clap::Args)]
pub struct DemoArgs {
    /// The demo image (relative to the project).
    #[arg(long, default_value = "models/demo.inkl")]
    pub image: PathBuf,
    /// The float checkpoint the image was converted from (relative to the project); another
    /// model's is refused.
    #[arg(long, default_value = "models/demo.safetensors")]
    pub checkpoint: PathBuf,
    /// Bytes of each held-out text to score (the model and the compressors see the same slice).
    #[arg(long, default_value_t = 20_000)]
    pub eval_bytes: usize,
    /// Bytes of held-out scenario text typed for the keystroke savings (cut to a word boundary).
    #[arg(long, default_value_t = 2_000)]
    pub savings_bytes: usize,
    /// Print one JSON object.
    #[arg(long)]
    pub json: bool,
}

/// The held-out texts the demo scores: never seen in training.
const HELD_OUT: [(&str, &str); 2] = [
    (
        "general English (held-out everyday example sentences)",
        "data/general/heldout/wordnet-examples.txt",
    ),
    (
        "scenario text (hut wardens' pager messages)",
        "data/scenario/heldout.txt",
    ),
];

/// Prompts the demo model continues.
const PROMPTS: [&str; 4] = [
    "Thank you for the ",
    "Supplies for the hut ",
    "Path closed between ",
    "Weather: ",
];

/// Sentences the typing section types key by key (invented, in the scenario's style).
const TYPED: [&str; 3] = [
    "Base to Pendrick Hut: the path is closed after the rockfall.",
    "Rope bag checked: 60 m rope, 8 slings and 10 carabiners.",
    "Rain since 07:00, heavy at times.",
];

/// 12-key entries: the text before the word, and the keys of the word (ITU-T E.161).
const KEYED: [(&str, &str); 2] = [("The path is ", "256733"), ("Rain since 07:00, ", "43289")];

/// Suggestions shown in the typing section.
const SHOWN: usize = 3;

/// The held-out text the savings are measured on, and the baseline's word counts (training text).
const SAVINGS_TEXT: &str = "data/scenario/heldout.txt";
const SAVINGS_CORPUS: &str = "data/scenario/train.txt";

/// One look of the simulated writer, for the screen and the JSON: shown at each word start
/// and where a suggestion is taken.
fn look_json(offer: &Offer<'_>) -> serde_json::Value {
    serde_json::json!({
        "typed": String::from_utf8_lossy(offer.typed),
        "offered": offer.words.iter().map(|w| String::from_utf8_lossy(w)).collect::<Vec<_>>(),
        "taken": offer.taken.map(|i| String::from_utf8_lossy(&offer.words[i]).into_owned()),
    })
}

/// The typing section: scripted sentences, 12-key entry, and keystroke savings against the
/// word-frequency baseline on held-out scenario text.
fn typing(image: &ModelFile, args: &DemoArgs) -> Result<serde_json::Value, HostError> {
    let image_error = |source| HostError::Image {
        path: args.image.clone(),
        source,
    };
    if !args.json {
        println!(
            "\n== typing with the int8 model, {SHOWN} suggestions; a suggestion that is the word is taken with one key"
        );
    }
    let mut sentences = Vec::new();
    for sentence in TYPED {
        let mut looks = Vec::new();
        let keys = image
            .with_weights(|w| {
                let mut memory = session_memory(w.dims(), MAX_COUNT);
                let session = memory.session::<_, MAX_COUNT, DEFAULT_HISTORY>(w)?;
                let mut predictor = ModelPredictor::new(session, SearchOptions::new(SHOWN));
                simulate_with(sentence.as_bytes(), SHOWN, &mut predictor, |offer| {
                    let at_word_start = offer
                        .typed
                        .last()
                        .is_none_or(|&b| inkling_core::session::is_boundary(b));
                    if at_word_start || offer.taken.is_some() {
                        looks.push(look_json(offer));
                    }
                })
            })
            .map_err(image_error)?;
        if !args.json {
            println!("  {sentence}");
            for look in &looks {
                let offered: Vec<&str> = look["offered"]
                    .as_array()
                    .map(|a| a.iter().filter_map(|w| w.as_str()).collect())
                    .unwrap_or_default();
                let taken = look["taken"]
                    .as_str()
                    .map_or(String::new(), |t| format!("   <- takes \"{t}\""));
                let typed = look["typed"].as_str().unwrap_or_default();
                let skip = typed.chars().count().saturating_sub(24);
                let tail: String = typed.chars().skip(skip).collect();
                println!("    {tail:>24}|  {}{taken}", offered.join(" · "));
            }
            println!(
                "    {} keys instead of {} ({:.0}% saved)",
                keys.keys,
                keys.bytes,
                100.0 * keys.savings(true, false)
            );
        }
        sentences.push(serde_json::json!({
            "text": sentence, "letters": keys.bytes, "keys": keys.keys, "looks": looks,
        }));
    }

    if !args.json {
        println!("\n== 12-key entry (ITU-T E.161: 2 abc, 3 def, 4 ghi, 5 jkl, 6 mno, 7 pqrs, 8 tuv, 9 wxyz)");
    }
    let mut keyed = Vec::new();
    for (context, digits) in KEYED {
        let found = image
            .with_weights(|w| {
                let mut memory = session_memory(w.dims(), MAX_COUNT);
                let mut session = memory.session::<_, MAX_COUNT, DEFAULT_HISTORY>(w)?;
                session.push_bytes(context.as_bytes())?;
                session.keys(digits.as_bytes(), &KeyMap::E161, &SearchOptions::new(SHOWN))
            })
            .map_err(image_error)?;
        let words: Vec<String> = found
            .list
            .iter()
            .map(|s| String::from_utf8_lossy(&s.text).into_owned())
            .collect();
        if !args.json {
            println!("  \"{context}\" + keys {digits}  ->  {}", words.join(" · "));
        }
        keyed.push(serde_json::json!({"context": context, "digits": digits, "words": words}));
    }

    let text_path = repo_path(SAVINGS_TEXT);
    let corpus_path = repo_path(SAVINGS_CORPUS);
    let text = std::fs::read(&text_path).map_err(HostError::io(&text_path))?;
    let corpus = std::fs::read(&corpus_path).map_err(HostError::io(&corpus_path))?;
    let mut baseline = FrequencyBaseline::from_corpus(&corpus);
    let slice = whole_words(&text, args.savings_bytes);
    if !args.json {
        println!(
            "\n== keystroke savings on held-out scenario text, against the {} most frequent training words that fit the prefix",
            SHOWN
        );
    }
    let found = image
        .with_weights(|w| {
            compare(
                w,
                &mut baseline,
                slice,
                SHOWN,
                SearchOptions::new(SHOWN),
                None,
                |_| {},
            )
        })
        .map_err(image_error)?;
    if !args.json {
        found.print();
    }
    let mut savings = found.to_json();
    savings["text"] = serde_json::json!(SAVINGS_TEXT);
    savings["baseline_corpus"] = serde_json::json!(SAVINGS_CORPUS);
    Ok(serde_json::json!({
        "sentences": sentences, "twelve_key": keyed, "keystroke_savings": savings,
    }))
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
    let image = ModelFile::open(&project_path(&args.image))?;
    let float = ModelFile::open(&project_path(&args.checkpoint))?;
    let bytes = image.image_bytes().ok_or_else(|| {
        HostError::Usage(format!(
            "{}: --image must be a packed image",
            args.image.display()
        ))
    })?;
    let model = image_model(bytes, &args.image)?;
    check_same_model(&image, &float, args)?;
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
        let [xz, gz] =
            YARDSTICKS.map(|(program, flags)| compressors::bits_per_byte(program, flags, text));
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
    report["typing"] = typing(&image, args)?;
    if args.json {
        println!("{report}");
    }
    Ok(())
}

//! `inkling eval`: bits per byte of one or more texts beside `xz -9e` and `gzip -9` on the
//! same bytes, optionally beside another model; with `--savings` the keystroke savings of word
//! completion against a word-frequency baseline, and with `--keypad` 12-key entry's
//! first-word rate and keystrokes per character against a frequency-ordered dictionary.
//!
//! Keystroke savings (Trnka & McCoy 2008, "Evaluating Word Prediction: Framing Keystroke
//! Savings", ACL-08): KS = (keys letter by letter − keys with prediction) / keys letter by
//! letter, for a writer who takes a suggestion with one key as soon as it is exactly the word
//! being typed. The headline figure counts the selection key and inserts no space after a
//! taken word; the other framings are reported beside it. See
//! [`keystroke_savings`](crate::keystroke_savings) for the simulation.

use std::path::{Path, PathBuf};

use indicatif::{ProgressBar, ProgressStyle};
use inkling_core::session::{DEFAULT_MARGIN, DEFAULT_MAX_STEPS};
use inkling_core::user_memory::{cache_blend::DEFAULT_DRAFT_TOP_K, DEFAULT_CACHE_WEIGHT};

use inkling_core::session::{SearchOptions, WordFilter, WordList};

use super::suggest::read_word_list;
use crate::compressors::{self, YARDSTICKS};
use crate::error::HostError;
use crate::file_kind::{check, Wanted};
use crate::keystroke_savings::simulation::whole_words;
use crate::keystroke_savings::{
    compare, keypad_entry, Comparison, FrequencyBaseline, KeypadCount, LearnOptions,
};
use crate::model_file::ModelFile;
use crate::text_scoring::bits_per_byte;

/// Arguments of `inkling eval`.
#[derive(Debug, clap::Args)]
pub struct EvalArgs {
    /// An image (int8 engine) or a checkpoint (float engine).
    pub model: PathBuf,
    /// A text file to score; give it several times for a table over several texts.
    #[arg(long, required = true)]
    pub text: Vec<PathBuf>,
    /// A second model scored on the same texts (e.g. a checkpoint against its image).
    #[arg(long)]
    pub against: Option<PathBuf>,
    /// Print one JSON object.
    #[arg(long)]
    pub json: bool,
    /// Also simulate a writer who takes a suggestion as soon as it is the word being typed,
    /// and report the keystroke savings of the model and of the baseline.
    #[arg(long)]
    pub savings: bool,
    /// Also enter each word of the texts as ITU-T E.161 digits: how often the model offers
    /// the intended word first, and the keystrokes per character (MacKenzie 2002) beside a
    /// dictionary ordered by the frequency of words in --baseline-corpus.
    #[arg(long)]
    pub keypad: bool,
    /// Suggestions shown at each key (for --savings), at most 16.
    #[arg(long, default_value_t = 3, requires = "savings")]
    pub count: usize,
    /// The word-frequency source of the baselines (for --savings and --keypad): a text
    /// other than --text, e.g. the training text.
    #[arg(long)]
    pub baseline_corpus: Option<PathBuf>,
    /// Bytes of each text to type for --savings and --keypad (cut back to a word
    /// boundary): the model takes a search, up to --max-steps engine steps, per key or word.
    #[arg(long, default_value_t = 5000)]
    pub max_bytes: usize,
    /// The only words the model may offer (for --savings and --keypad): a word list, one
    /// word per line, matched as the session matches lexicons.
    #[arg(long, value_name = "FILE")]
    pub lexicon: Option<PathBuf>,
    /// Engine steps each search may take (for --savings and --keypad).
    #[arg(long, default_value_t = DEFAULT_MAX_STEPS)]
    pub max_steps: usize,
    /// How far below the best a word may score and still be followed, in nats (for
    /// --savings and --keypad; `inf` follows every word that could still be offered).
    #[arg(long, default_value_t = DEFAULT_MARGIN)]
    pub margin: f32,
    /// Also type each text with a user memory that starts empty and learns every word (and
    /// the phrase ending with it) as the writer ends it, blended into the suggestions as a
    /// cache model, with verified phrase suggestions (for --savings; reported as
    /// "with_learning" beside "model").
    #[arg(long, requires = "savings")]
    pub learn: bool,
    /// The cache weight of --learn: 0 is the model alone, 1 the memory alone.
    #[arg(long, default_value_t = DEFAULT_CACHE_WEIGHT, requires = "learn")]
    pub cache_weight: f32,
    /// The k of the phrase drafts' acceptance rule under --learn: a drafted byte is
    /// accepted while it is among the model's k likeliest next bytes (0: no phrases).
    #[arg(long, default_value_t = DEFAULT_DRAFT_TOP_K, requires = "learn")]
    pub draft_top_k: usize,
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

/// Checks the options of `--savings` and `--keypad` before any work, and reads the
/// baseline corpus.
fn baseline(args: &EvalArgs) -> Result<Option<FrequencyBaseline>, HostError> {
    if !args.savings && !args.keypad {
        return Ok(None);
    }
    super::checks::count("--count", args.count)?;
    super::checks::at_least_one("--max-bytes", args.max_bytes)?;
    if !(0.0..=1.0).contains(&args.cache_weight) {
        return Err(HostError::Usage(format!(
            "--cache-weight {}: must be between 0 (the model alone) and 1 (the memory alone)",
            args.cache_weight
        )));
    }
    let corpus_path = args.baseline_corpus.as_ref().ok_or_else(|| {
        HostError::Usage(
            "--savings and --keypad need --baseline-corpus FILE: the baseline's word counts \
             must come from a text other than --text (e.g. the training text)"
                .into(),
        )
    })?;
    let same = |a: &Path, b: &Path| match (a.canonicalize(), b.canonicalize()) {
        (Ok(a), Ok(b)) => a == b,
        _ => false,
    };
    if let Some(text) = args.text.iter().find(|t| same(corpus_path, t)) {
        return Err(HostError::Usage(format!(
            "--baseline-corpus {}: is the --text file {} itself; a baseline that has counted \
             the text it is scored on would be cheating",
            corpus_path.display(),
            text.display()
        )));
    }
    let corpus = std::fs::read(corpus_path).map_err(HostError::io(corpus_path))?;
    Ok(Some(FrequencyBaseline::from_corpus(&corpus)))
}

fn progress_bar(label: &str, len: usize) -> ProgressBar {
    let bar = ProgressBar::new(len as u64);
    bar.set_style(
        ProgressStyle::with_template(&format!(
            "{label} [{{bar:30}}] {{pos}}/{{len}} bytes ({{eta}})"
        ))
        .unwrap_or_else(|_| ProgressStyle::default_bar()),
    );
    bar
}

/// The keystroke savings of `args.model` and of the baseline on the start of `text`.
fn savings(
    args: &EvalArgs,
    baseline: &mut FrequencyBaseline,
    search: SearchOptions<'_>,
    text: &[u8],
) -> Result<Comparison, HostError> {
    let text = whole_words(text, args.max_bytes);
    let file = ModelFile::open(&args.model)?;
    let bar = progress_bar("keystrokes", text.len());
    let found = file.with_weights(|w| {
        let learn = args.learn.then_some(LearnOptions {
            weight: args.cache_weight,
            draft_top_k: args.draft_top_k,
        });
        compare(w, baseline, text, args.count, search, learn, |at| {
            bar.set_position(at as u64)
        })
    });
    bar.finish_and_clear();
    found.map_err(|source| HostError::Image {
        path: args.model.clone(),
        source,
    })
}

/// 12-key entry of the start of `text` with the model and with the baseline's dictionary.
fn keypad(
    args: &EvalArgs,
    baseline: &FrequencyBaseline,
    search: SearchOptions<'_>,
    text: &[u8],
) -> Result<(KeypadCount, KeypadCount), HostError> {
    let text = whole_words(text, args.max_bytes);
    let file = ModelFile::open(&args.model)?;
    let bar = progress_bar("12-key", text.len());
    let found = file.with_weights(|w| {
        keypad_entry(w, baseline, text, search, |at| bar.set_position(at as u64))
    });
    bar.finish_and_clear();
    found.map_err(|source| HostError::Image {
        path: args.model.clone(),
        source,
    })
}

/// Everything measured on one text.
struct TextReport {
    path: PathBuf,
    bytes: usize,
    bits_per_byte: f64,
    engine: &'static str,
    against: Option<(f64, &'static str)>,
    /// `xz -9e` and `gzip -9`, in the order of [`YARDSTICKS`].
    compressors: [Option<f64>; 2],
    savings: Option<Comparison>,
    keypad: Option<(KeypadCount, KeypadCount)>,
}

impl TextReport {
    /// The JSON object of one text (the keys of a one-text run).
    fn to_json(&self, args: &EvalArgs) -> serde_json::Value {
        let mut v = serde_json::json!({
            "model": args.model,
            "engine": self.engine,
            "text": self.path,
            "bytes": self.bytes,
            "bits_per_byte": self.bits_per_byte,
            "xz_bits_per_byte": self.compressors[0],
            "gzip_bits_per_byte": self.compressors[1],
        });
        if let (Some(p), Some((obpb, oengine))) = (&args.against, self.against) {
            v["against"] = serde_json::json!({
                "model": p, "engine": oengine, "bits_per_byte": obpb,
            });
            v["difference"] = serde_json::json!(self.bits_per_byte - obpb);
            v["relative_difference"] = serde_json::json!((self.bits_per_byte - obpb) / obpb);
        }
        if let (Some(found), Some(corpus)) = (&self.savings, &args.baseline_corpus) {
            let mut ks = found.to_json();
            ks["baseline_corpus"] = serde_json::json!(corpus);
            v["keystroke_savings"] = ks;
        }
        if let (Some((model, dictionary)), Some(corpus)) = (&self.keypad, &args.baseline_corpus) {
            v["keypad"] = serde_json::json!({
                "model": model.to_json(),
                "dictionary": dictionary.to_json(),
                "baseline_corpus": corpus,
            });
        }
        v
    }

    /// Today's lines for a one-text run.
    fn print(&self, args: &EvalArgs) {
        println!(
            "{} ({}): {:.4} bits per byte on {} bytes",
            args.model.display(),
            self.engine,
            self.bits_per_byte,
            self.bytes
        );
        if let (Some(p), Some((obpb, oengine))) = (&args.against, self.against) {
            let bpb = self.bits_per_byte;
            println!("{} ({oengine}): {obpb:.4} bits per byte", p.display());
            println!(
                "difference: {:+.4} bits per byte ({:+.2}%)",
                bpb - obpb,
                100.0 * (bpb - obpb) / obpb
            );
        }
        let shown = |v: Option<f64>| v.map_or("-".to_string(), |v| format!("{v:.4}"));
        println!(
            "on the same bytes: xz -9e {}, gzip -9 {} bits per byte",
            shown(self.compressors[0]),
            shown(self.compressors[1])
        );
        if let Some(found) = &self.savings {
            found.print();
        }
        if let Some((model, dictionary)) = &self.keypad {
            println!(
                "12-key entry, {} words: offered first {:.1}% (dictionary {:.1}%), \
                 keystrokes per character {:.4} (dictionary {:.4})",
                model.words,
                100.0 * model.first_rate(),
                100.0 * dictionary.first_rate(),
                model.kspc(),
                dictionary.kspc()
            );
        }
    }
}

/// The table of a run over several texts.
fn print_table(args: &EvalArgs, reports: &[TextReport]) {
    let shown = |v: Option<f64>| v.map_or("-".to_string(), |v| format!("{v:.3}"));
    let engine = reports.first().map_or("", |r| r.engine);
    let mut header = format!("{:<36} {:>8} {:>8}", "text", "bytes", engine);
    if let Some((_, oengine)) = reports.first().and_then(|r| r.against) {
        header += &format!(" {oengine:>8}");
    }
    header += &format!(" {:>8} {:>8} {:>9}", "xz -9e", "gzip -9", "model/xz");
    if args.savings {
        header += &format!(" {:>8} {:>8}", "saved", "freq");
    }
    if args.learn {
        header += &format!(" {:>8}", "learning");
    }
    if args.keypad {
        header += &format!(" {:>7} {:>7} {:>7} {:>7}", "first", "dict", "KSPC", "dict");
    }
    println!(
        "{} (bits per byte; savings with {} suggestions)",
        args.model.display(),
        args.count
    );
    println!("{header}");
    for r in reports {
        let name = r.path.display().to_string();
        let name = if name.len() > 36 {
            format!("...{}", &name[name.len() - 33..])
        } else {
            name
        };
        let mut line = format!("{name:<36} {:>8} {:>8.3}", r.bytes, r.bits_per_byte);
        if let Some((obpb, _)) = r.against {
            line += &format!(" {obpb:>8.3}");
        }
        line += &format!(
            " {:>8} {:>8} {:>9}",
            shown(r.compressors[0]),
            shown(r.compressors[1]),
            shown(r.compressors[0].map(|xz| r.bits_per_byte / xz))
        );
        if let Some(c) = &r.savings {
            line += &format!(
                " {:>7.1}% {:>7.1}%",
                100.0 * c.model.savings(true, false),
                100.0 * c.baseline.savings(true, false)
            );
            if let Some(run) = &c.with_learning {
                line += &format!(" {:>7.1}%", 100.0 * run.keys.savings(true, false));
            }
        }
        if let Some((m, d)) = &r.keypad {
            line += &format!(
                " {:>6.1}% {:>6.1}% {:>7.3} {:>7.3}",
                100.0 * m.first_rate(),
                100.0 * d.first_rate(),
                m.kspc(),
                d.kspc()
            );
        }
        println!("{line}");
    }
}

/// Runs `inkling eval`.
pub fn run(args: &EvalArgs) -> Result<(), HostError> {
    if let Some(against) = &args.against {
        check(against, Wanted::Model)?;
    }
    let mut texts = Vec::with_capacity(args.text.len());
    for path in &args.text {
        let text = std::fs::read(path).map_err(HostError::io(path))?;
        if text.len() < 2 {
            return Err(HostError::Usage(format!(
                "{}: needs at least 2 bytes to score",
                path.display()
            )));
        }
        texts.push(text);
    }
    let mut baseline = baseline(args)?;
    let lexicon = args.lexicon.as_deref().map(read_word_list).transpose()?;
    let filter = WordFilter {
        lexicon: match (&args.lexicon, &lexicon) {
            (Some(path), Some(bytes)) => Some(
                WordList::new(bytes)
                    .map_err(|e| HostError::Usage(format!("{}: {e}", path.display())))?,
            ),
            _ => None,
        },
        ..WordFilter::default()
    };
    let search = SearchOptions {
        max_steps: args.max_steps,
        margin: args.margin,
        filter,
        ..SearchOptions::new(args.count)
    };
    let mut reports = Vec::with_capacity(texts.len());
    for (path, text) in args.text.iter().zip(&texts) {
        let (bits_per_byte, engine) = score(&args.model, text, "model")?;
        let against = match &args.against {
            Some(p) => Some(score(p, text, "against")?),
            None => None,
        };
        let compressors =
            YARDSTICKS.map(|(program, flags)| compressors::bits_per_byte(program, flags, text));
        let savings = match (&mut baseline, args.savings) {
            (Some(b), true) => Some(savings(args, b, search, text)?),
            _ => None,
        };
        let keypad = match (&baseline, args.keypad) {
            (Some(b), true) => Some(keypad(args, b, search, text)?),
            _ => None,
        };
        reports.push(TextReport {
            path: path.clone(),
            bytes: text.len(),
            bits_per_byte,
            engine,
            against,
            compressors,
            savings,
            keypad,
        });
    }
    match (&reports[..], args.json) {
        ([one], true) => println!("{}", one.to_json(args)),
        ([one], false) => one.print(args),
        (all, true) => {
            let texts: Vec<serde_json::Value> = all.iter().map(|r| r.to_json(args)).collect();
            println!(
                "{}",
                serde_json::json!({ "model": args.model, "count": args.count, "texts": texts })
            );
        }
        (all, false) => print_table(args, all),
    }
    Ok(())
}

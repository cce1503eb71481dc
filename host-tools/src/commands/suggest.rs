//! `inkling suggest`: completions of the word being typed (or of the next word).

use std::path::{Path, PathBuf};

use std::cmp::Ordering;

use inkling_core::session::{
    is_boundary, word_order, SearchOptions, Session, Suggestions, WordFilter, WordList,
    DEFAULT_MARGIN, DEFAULT_MAX_STEPS,
};
use inkling_core::Model;

use crate::error::HostError;
use crate::keystroke_savings::session_memory;
use crate::model_file::load_image;

/// The most suggestions one run may ask for (the session's beam capacity).
pub const MAX_COUNT: usize = 16;

/// Arguments shared by `inkling suggest` and `inkling keys`.
#[derive(Debug, clap::Args)]
pub struct SearchArgs {
    /// An image, or a checkpoint (converted to an image in memory first).
    pub model: PathBuf,
    /// How many suggestions (beams), at most 16.
    #[arg(long, default_value_t = 3)]
    pub count: usize,
    /// Print one JSON object.
    #[arg(long)]
    pub json: bool,
    /// Words never offered, in any case: a file with one word per line (lines starting
    /// with `#` are comments; sorted here).
    #[arg(long)]
    pub deny: Option<PathBuf>,
    /// The only words offered, in any case ("tamsel" allows "Tamsel"): a file with one word
    /// per line (lines starting with `#` are comments; sorted here).
    #[arg(long)]
    pub lexicon: Option<PathBuf>,
    /// Engine steps the search may take.
    #[arg(long, default_value_t = DEFAULT_MAX_STEPS)]
    pub max_steps: usize,
    /// How far below the best a word may score and still be followed, in nats (`inf`
    /// follows every word that could still be offered).
    #[arg(long, default_value_t = DEFAULT_MARGIN)]
    pub margin: f32,
}

/// Arguments of `inkling suggest`.
#[derive(Debug, clap::Args)]
pub struct SuggestArgs {
    #[command(flatten)]
    pub search: SearchArgs,
    /// The text typed so far (empty: the first word of a message). If it ends inside a
    /// word, that word is completed; after a space or punctuation, the next word is offered.
    #[arg(long, default_value = "")]
    pub text: String,
}

/// Runs `inkling suggest`.
pub fn run(args: &SuggestArgs) -> Result<(), HostError> {
    let found = with_session(&args.search, args.text.as_bytes(), |session, options| {
        session.suggest(options)
    })?;
    print(&found, args.search.json);
    Ok(())
}

/// A word list file made ready for the core: one word per line (surrounding whitespace,
/// blank lines and `#` comment lines dropped), sorted in the core's [`word_order`] (case
/// folded), each word once in any case: the order the firmware's list must have. A line
/// that is not one word (it holds a space or punctuation, as prose does) or a file without
/// words is refused, naming the line.
pub fn read_word_list(path: &Path) -> Result<Vec<u8>, HostError> {
    let bytes = std::fs::read(path).map_err(HostError::io(path))?;
    let refuse = |problem: String| HostError::WrongFile {
        path: path.to_path_buf(),
        problem,
    };
    let mut words: Vec<&[u8]> = Vec::new();
    for (number, line) in bytes.split(|&b| b == b'\n').enumerate() {
        let word = line.trim_ascii();
        if word.is_empty() || word.starts_with(b"#") {
            continue;
        }
        if word.iter().any(|&b| is_boundary(b)) {
            return Err(refuse(format!(
                "line {} ({:?}) is not one word: a word list holds one word per line \
                 (letters, digits, ' and -; lines starting with # are comments)",
                number + 1,
                String::from_utf8_lossy(word)
            )));
        }
        words.push(word);
    }
    if words.is_empty() {
        return Err(refuse(
            "no words in it: a word list holds one word per line (lines starting with # are \
             comments)"
                .into(),
        ));
    }
    words.sort_unstable_by(|a, b| word_order(a, b));
    words.dedup_by(|a, b| word_order(a, b) == Ordering::Equal);
    Ok(words.join(&b'\n'))
}

/// Checks a prepared word list (it cannot fail after [`read_word_list`], but the core's
/// own check stays the judge).
fn word_list<'a>(path: &Path, bytes: &'a [u8]) -> Result<WordList<'a>, HostError> {
    WordList::new(bytes).map_err(|e| HostError::Usage(format!("{}: {e}", path.display())))
}

/// Opens the model, types `text` into a session and runs `search` on it.
pub fn with_session(
    args: &SearchArgs,
    text: &[u8],
    search: impl FnOnce(
        &mut Session<'_, Model<'_>, MAX_COUNT>,
        &SearchOptions<'_>,
    ) -> Result<Suggestions<MAX_COUNT>, inkling_core::Error>,
) -> Result<Suggestions<MAX_COUNT>, HostError> {
    super::checks::count("--count", args.count)?;
    let deny = args.deny.as_deref().map(read_word_list).transpose()?;
    let lexicon = args.lexicon.as_deref().map(read_word_list).transpose()?;
    let filter = WordFilter {
        deny: match (&args.deny, &deny) {
            (Some(path), Some(bytes)) => word_list(path, bytes)?,
            _ => WordList::EMPTY,
        },
        lexicon: match (&args.lexicon, &lexicon) {
            (Some(path), Some(bytes)) => Some(word_list(path, bytes)?),
            _ => None,
        },
    };
    let options = SearchOptions {
        max_steps: args.max_steps,
        margin: args.margin,
        filter,
        ..SearchOptions::new(args.count)
    };

    let image = load_image(&args.model)?;
    let model_error = |source| HostError::Image {
        path: args.model.clone(),
        source,
    };
    let model = Model::from_bytes(&image).map_err(model_error)?;
    let mut memory = session_memory(model.dims(), MAX_COUNT);
    let mut session: Session<_, MAX_COUNT> = memory.session(model).map_err(model_error)?;
    for (at, &b) in text.iter().enumerate() {
        session
            .push(b)
            .map_err(|e| HostError::Usage(format!("--text, byte {at}: {e}")))?;
    }
    search(&mut session, &options).map_err(|e| HostError::Usage(e.to_string()))
}

/// One suggestion as printed in JSON (fields in this order).
#[derive(serde::Serialize)]
struct SuggestionJson {
    text: String,
    /// The suggestion's exact bytes in hex (the text above is lossy where they are not UTF-8).
    text_hex: String,
    logprob: f32,
    /// The f32's bit pattern, for bit-exact comparison with firmware.
    logprob_bits: String,
    finished: bool,
}

/// The JSON object printed (fields in this order).
#[derive(serde::Serialize)]
struct SuggestionsJson {
    suggestions: Vec<SuggestionJson>,
    steps: usize,
}

/// Prints suggestions: one JSON object
/// `{"suggestions": [{"text", "text_hex", "logprob", "logprob_bits", "finished"}...], "steps"}`, or one
/// suggestion per line (`text<TAB>logprob`, with `<TAB>unfinished` for a word the search did
/// not end). Bytes that are not UTF-8 print as U+FFFD.
pub fn print(found: &Suggestions<MAX_COUNT>, json: bool) {
    if json {
        let out = SuggestionsJson {
            suggestions: found
                .list
                .iter()
                .map(|s| SuggestionJson {
                    text: String::from_utf8_lossy(&s.text).into_owned(),
                    text_hex: s.text.iter().map(|b| format!("{b:02x}")).collect(),
                    logprob: s.logprob,
                    logprob_bits: format!("{:#010x}", s.logprob.to_bits()),
                    finished: s.finished,
                })
                .collect(),
            steps: found.steps,
        };
        match serde_json::to_string(&out) {
            Ok(line) => println!("{line}"),
            // Strings, numbers and booleans only: serialising cannot fail.
            Err(e) => eprintln!("JSON output failed: {e}"),
        }
    } else {
        for s in &found.list {
            let tag = if s.finished { "" } else { "\tunfinished" };
            println!(
                "{}\t{:.4}{tag}",
                String::from_utf8_lossy(&s.text),
                s.logprob
            );
        }
        if found.cut_short {
            eprintln!(
                "search stopped after {} steps (--max-steps); results may be incomplete",
                found.steps
            );
        }
    }
}

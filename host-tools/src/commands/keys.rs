//! `inkling keys`: 12-key (ITU-T E.161) entry, the likely words for a sequence of keys.

use inkling_core::session::{is_boundary, KeyMap, MAX_WORD_LEN};

use super::suggest::{print, with_session, SearchArgs};
use crate::error::HostError;

/// What the keys without letters do, for messages.
const KEYS_WITHOUT_LETTERS: &str = "only 2 to 9 carry letters (2 abc, 3 def, 4 ghi, 5 jkl, \
     6 mno, 7 pqrs, 8 tuv, 9 wxyz); 0 (space), 1 (punctuation), * and # stand for no letter: \
     on a device they end or edit the word, so put the text they give in --text";

/// Arguments of `inkling keys`.
#[derive(Debug, clap::Args)]
pub struct KeysArgs {
    #[command(flatten)]
    pub search: SearchArgs,
    /// The keys pressed, e.g. `4663`: one letter of each key (2 abc, 3 def, 4 ghi, 5 jkl,
    /// 6 mno, 7 pqrs, 8 tuv, 9 wxyz), then the end of the word. Each key stands for its
    /// letters in both cases and the model picks the case (`826735` after "Base, this is "
    /// gives "Tamsel"); to force a case, type the word's first letters in --text (they are
    /// kept as typed: --text "Base, this is t" --digits 26735).
    #[arg(long)]
    pub digits: String,
    /// Text before the keys, as context; if it ends inside a word, the keys continue it.
    #[arg(long, default_value = "")]
    pub text: String,
    /// Also offer the accented Latin-1 letters on the key of their base letter (é on 3,
    /// ñ on 6, ß on 7, ...).
    #[arg(long)]
    pub accented: bool,
}

/// Checks the keys before any work: letter keys only, and a word that fits.
fn check_digits(args: &KeysArgs, map: &KeyMap) -> Result<(), HostError> {
    if args.digits.is_empty() {
        return Err(HostError::Usage(format!(
            "--digits must hold at least one key: {KEYS_WITHOUT_LETTERS}"
        )));
    }
    map.check(args.digits.as_bytes())
        .map_err(|e| HostError::Usage(format!("--digits: {e}: {KEYS_WITHOUT_LETTERS}")))?;
    let text = args.text.as_bytes();
    let typed = text.len()
        - text
            .iter()
            .rposition(|&b| is_boundary(b))
            .map_or(0, |p| p + 1);
    if typed + args.digits.len() > MAX_WORD_LEN {
        return Err(HostError::Usage(format!(
            "--digits: {} keys after the {typed} letters of the word in --text make a word \
             longer than the {MAX_WORD_LEN} bytes a word may have",
            args.digits.len()
        )));
    }
    Ok(())
}

/// Runs `inkling keys`.
pub fn run(args: &KeysArgs) -> Result<(), HostError> {
    let map = if args.accented {
        KeyMap::E161_ACCENTED
    } else {
        KeyMap::E161
    };
    check_digits(args, &map)?;
    let found = with_session(&args.search, args.text.as_bytes(), |session, options| {
        session.keys(args.digits.as_bytes(), &map, options)
    })?;
    print(&found, args.search.json);
    Ok(())
}

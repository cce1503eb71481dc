//! `inkling keys`: 12-key (ITU-T E.161) entry, the likely words for a sequence of keys.

use inkling_core::session::KeyMap;

use super::suggest::{print, with_session, SearchArgs};
use crate::error::HostError;

/// Arguments of `inkling keys`.
#[derive(Debug, clap::Args)]
pub struct KeysArgs {
    #[command(flatten)]
    pub search: SearchArgs,
    /// The keys pressed, e.g. `4663`: one letter of each key (2 abc, 3 def, 4 ghi, 5 jkl,
    /// 6 mno, 7 pqrs, 8 tuv, 9 wxyz), then the end of the word.
    #[arg(long)]
    pub digits: String,
    /// Text before the word, as context.
    #[arg(long, default_value = "")]
    pub text: String,
}

/// Runs `inkling keys`.
pub fn run(args: &KeysArgs) -> Result<(), HostError> {
    if args.digits.is_empty() {
        return Err(HostError::Usage(
            "--digits must hold at least one key".into(),
        ));
    }
    KeyMap::E161
        .check(args.digits.as_bytes())
        .map_err(|e| HostError::Usage(format!("--digits: {e}")))?;
    let found = with_session(&args.search, args.text.as_bytes(), |session, options| {
        session.keys(args.digits.as_bytes(), &KeyMap::E161, options)
    })?;
    print(&found, args.search.json);
    Ok(())
}

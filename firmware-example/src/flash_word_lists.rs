//! The deny list and the lexicon of a program, in flash beside the model image.
//!
//! Each is a file in the core's word list format, specified in
//! `inkling_core::session::word_list`: one word a line, lines separated by `\n`, no empty
//! lines, sorted strictly ascending bytewise after folding case (a list of lower-case words
//! in the order of `LC_ALL=C sort -u` is one). The `inkling` command's `--deny` and
//! `--lexicon` take the same files. The build script (`build.rs`) reads them from
//! `INKLING_DENY` (default `../data/lexicon/deny-callouts.txt`) and `INKLING_LEXICON`
//! (default none), checks them, so that a bad list fails the build, and puts them in flash
//! with `include_bytes!`, byte for byte: the session looks words up there by binary search,
//! with no copy in RAM and no index.

use inkling_core::session::{WordFilter, WordList};

/// The word lists built into flash: what `word_lists.rs` (written by the build script) holds.
#[derive(Debug, Clone, Copy)]
pub struct FlashWordLists {
    /// Words never offered, in any case (empty: none).
    pub deny: &'static [u8],
    /// If given, the only words offered, in any case.
    pub lexicon: Option<&'static [u8]>,
}

impl FlashWordLists {
    /// The session's word filter over the lists (`SearchOptions::filter`). The build
    /// script checked them already; the core's check stays the judge.
    pub fn filter(&self) -> Result<WordFilter<'static>, inkling_core::Error> {
        Ok(WordFilter {
            deny: WordList::new(self.deny)?,
            lexicon: self.lexicon.map(WordList::new).transpose()?,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_lists_become_the_sessions_filter() {
        let lists = FlashWordLists {
            deny: b"stretcher\n",
            lexicon: Some(b"hut\nstream\nstretcher\n"),
        };
        let filter = lists.filter().unwrap();
        assert!(filter.offers(b"hut") && !filter.offers(b"Stretcher"));
        assert!(!filter.offers(b"ridge"));
        // An empty deny list and no lexicon let every word through.
        let none = FlashWordLists {
            deny: b"",
            lexicon: None,
        };
        assert_eq!(none.filter().unwrap(), WordFilter::default());
        // A list out of order is refused, as the build script refuses it.
        let bad = FlashWordLists {
            deny: b"stream\nhut\n",
            lexicon: None,
        };
        assert!(bad.filter().is_err());
    }
}

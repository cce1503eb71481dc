//! `inkling try`: type in the terminal and watch the suggestions follow every key.
//!
//! Keys (chosen to work in any plain terminal; digits and letters are text):
//! - letters, digits, punctuation, space: typed;
//! - `Tab`: take the marked suggestion (the first unless moved), the word (or phrase) is
//!   completed and nothing is inserted after it;
//! - `Up` / `Down`: move the mark;
//! - `Enter`: a new line (the end of a message, as in the training text);
//! - `Backspace`: delete the last character (inside a word or across a boundary);
//! - `Ctrl-X`: forget every word and phrase learned (in the memory file too, with `--memory`);
//! - `Esc` or `Ctrl-C`: quit; the terminal is restored however the screen ends.
//!
//! The session learns: each word is put in a user memory when a boundary after it is typed
//! (typos too), with the phrase that ends with it (up to four words of the sentence); the
//! memory is blended into the suggestions as a cache model, and a phrase whose start is typed
//! is offered, once the model has verified it, after the words, marked "(phrase)". With
//! `--memory FILE` the memory is read from FILE at the start and written to it at every
//! new line and on quitting, in the layout a device's flash holds
//! ([`memory_file`](crate::memory_file)). The file holds what was typed.
//!
//! The screen fits the terminal: when rows are short, the key help and the blank lines go
//! first, then suggestions beyond the first, then older lines of text; the line being typed
//! always stays. Long lines are cut to the terminal's width. `try` needs an interactive
//! terminal; scripts use `inkling suggest` or `inkling keys`.

use std::io::{self, IsTerminal, Write};
use std::path::PathBuf;

use crossterm::event::{self, Event, KeyCode, KeyEvent, KeyEventKind, KeyModifiers};
use crossterm::style::Print;
use crossterm::terminal::{self, ClearType};
use crossterm::{cursor, execute, queue};
use inkling_core::engine::weights::Weights;
use inkling_core::session::{
    is_boundary, SearchOptions, Session, Suggestions, WordList, DEFAULT_HISTORY, DEFAULT_MAX_STEPS,
};
use inkling_core::user_memory::{CacheBlend, DEFAULT_CACHE_WEIGHT};

use super::suggest::MAX_COUNT;
use crate::error::HostError;
use crate::keystroke_savings::{session_memory, HostMemory};
use crate::memory_file::MemoryFile;
use crate::model_file::ModelFile;

/// Lines of typed text kept on the screen (the oldest scroll off).
const TEXT_LINES: usize = 6;

/// Arguments of `inkling try`.
#[derive(Debug, clap::Args)]
pub struct TryArgs {
    /// An image (int8 engine) or a checkpoint (float engine).
    pub model: PathBuf,
    /// How many suggestions, at most 16.
    #[arg(long, default_value_t = 3)]
    pub count: usize,
    /// Engine steps each search may take.
    #[arg(long, default_value_t = DEFAULT_MAX_STEPS)]
    pub max_steps: usize,
    /// Keep the learned words and phrases in FILE (the bytes of a device's flash range):
    /// read at the start, written at every new line and on quitting. It holds what you type.
    #[arg(long, value_name = "FILE")]
    pub memory: Option<PathBuf>,
}

/// Raw mode and the alternate screen, given back when dropped (also on error or panic).
struct RawTerminal;

impl RawTerminal {
    fn enter() -> io::Result<Self> {
        terminal::enable_raw_mode()?;
        let guard = RawTerminal;
        execute!(io::stdout(), terminal::EnterAlternateScreen, cursor::Hide)?;
        Ok(guard)
    }
}

impl Drop for RawTerminal {
    fn drop(&mut self) {
        // Nothing more can be done if the terminal refuses; the shell's `reset` still works.
        let _ = execute!(io::stdout(), cursor::Show, terminal::LeaveAlternateScreen);
        let _ = terminal::disable_raw_mode();
    }
}

/// What one key asks for.
enum Action {
    Type(Vec<u8>),
    Take,
    Mark(isize),
    Delete,
    Forget,
    Quit,
    Ignore,
}

fn action(key: &KeyEvent) -> Action {
    let ctrl = key.modifiers.contains(KeyModifiers::CONTROL);
    match key.code {
        KeyCode::Esc => Action::Quit,
        KeyCode::Char('c') if ctrl => Action::Quit,
        KeyCode::Char('x') if ctrl => Action::Forget,
        KeyCode::Char(c) if !ctrl && !key.modifiers.contains(KeyModifiers::ALT) => {
            Action::Type(c.to_string().into_bytes())
        }
        KeyCode::Enter => Action::Type(vec![b'\n']),
        KeyCode::Tab => Action::Take,
        KeyCode::Up => Action::Mark(-1),
        KeyCode::Down => Action::Mark(1),
        KeyCode::Backspace => Action::Delete,
        _ => Action::Ignore,
    }
}

/// Bytes of the last character of `text`: the shortest tail that is valid UTF-8, else 1.
fn last_char_len(text: &[u8]) -> usize {
    (1..=4.min(text.len()))
        .find(|&n| std::str::from_utf8(&text[text.len() - n..]).is_ok())
        .unwrap_or(1)
}

/// The screen's state: the session, the text it has seen and what it offers.
struct Screen<'b, W: Weights> {
    session: Session<'b, W, MAX_COUNT>,
    options: SearchOptions<'static>,
    text: Vec<u8>,
    found: Suggestions<MAX_COUNT>,
    mark: usize,
    keys: usize,
    note: String,
    /// The words and phrases learned this session (and read from the memory file).
    learned: Box<HostMemory>,
    /// Where the memory is kept, if anywhere.
    file: Option<MemoryFile>,
}

impl<'b, W: Weights> Screen<'b, W> {
    /// A screen with nothing typed yet.
    fn new(
        session: Session<'b, W, MAX_COUNT>,
        options: SearchOptions<'static>,
        learned: Box<HostMemory>,
        file: Option<MemoryFile>,
    ) -> Self {
        Screen {
            session,
            options,
            text: Vec::new(),
            found: Suggestions::default(),
            mark: 0,
            keys: 0,
            note: String::new(),
            learned,
            file,
        }
    }

    fn refresh(&mut self) -> Result<(), inkling_core::Error> {
        let options = SearchOptions {
            memory: Some(CacheBlend::new(&self.learned, DEFAULT_CACHE_WEIGHT)),
            ..self.options
        };
        self.found = self.session.suggest(&options)?;
        self.mark = 0;
        Ok(())
    }

    /// Writes the memory to its file, if it has one (a failure is shown, not fatal).
    fn save_memory(&mut self) {
        if let Some(file) = &mut self.file {
            if let Err(e) = file.save(&mut self.learned) {
                self.note = format!("memory not saved: {e}");
            }
        }
    }

    /// Types `bytes`, all or none: a refused byte takes back those before it.
    fn type_bytes(&mut self, bytes: &[u8]) -> Result<(), inkling_core::Error> {
        for (done, &b) in bytes.iter().enumerate() {
            if is_boundary(b) {
                self.learned.learn(self.session.word(), &WordList::EMPTY);
                self.learned.learn_phrase(&self.text, &WordList::EMPTY);
            }
            if let Err(e) = self.session.push(b) {
                for _ in 0..done {
                    self.session.backspace()?;
                    self.text.pop();
                }
                return Err(e);
            }
            self.text.push(b);
        }
        Ok(())
    }

    /// What the screen offers, in order: the words, then the phrase if there is one, each
    /// with the tag shown after it.
    fn offers(&self) -> impl Iterator<Item = (&[u8], &'static str)> {
        let words = self.found.list.iter().map(|s| {
            let tag = if s.finished { "" } else { "  (unfinished)" };
            (&s.text[..], tag)
        });
        let phrase = self
            .found
            .phrase
            .iter()
            .map(|p| (&p.text[..], "  (phrase)"));
        words.chain(phrase)
    }

    fn delete(&mut self) -> Result<(), inkling_core::Error> {
        for _ in 0..last_char_len(&self.text) {
            if !self.session.backspace()? {
                self.note = "nothing more to delete: the session keeps only its recent text".into();
                return Ok(());
            }
            self.text.pop();
        }
        Ok(())
    }

    /// Handles one key; `false` to quit.
    fn key(&mut self, key: &KeyEvent) -> Result<bool, inkling_core::Error> {
        self.note.clear();
        let result = match action(key) {
            Action::Quit => return Ok(false),
            Action::Ignore => return Ok(true),
            Action::Mark(step) => {
                let n = self.offers().count().max(1) as isize;
                self.mark = (self.mark as isize + step).rem_euclid(n) as usize;
                self.keys += 1;
                return Ok(true);
            }
            Action::Type(bytes) => {
                let typed = self.type_bytes(&bytes);
                if bytes == b"\n" {
                    self.save_memory();
                }
                typed
            }
            Action::Forget => {
                self.learned.clear();
                self.save_memory();
                if self.note.is_empty() {
                    self.note = "every learned word and phrase forgotten".into();
                }
                Ok(())
            }
            Action::Take => {
                // A suggestion (word or phrase) is the typed part of the word followed by its
                // completion.
                let typed = self.session.word().len();
                let rest: Vec<u8> = (self.offers().nth(self.mark))
                    .and_then(|(text, _)| text.get(typed..))
                    .map(<[u8]>::to_vec)
                    .unwrap_or_default();
                self.type_bytes(&rest)
            }
            Action::Delete => self.delete(),
        };
        self.keys += 1;
        if let Err(e) = result {
            self.note = format!("not typed: {e}");
        }
        self.refresh()?;
        Ok(true)
    }

    /// The screen's lines for a terminal of `rows` × `cols` (see the module docs for what
    /// goes first when rows are short).
    fn lines(&self, title: &str, rows: usize, cols: usize) -> Vec<String> {
        let text: Vec<&[u8]> = self.text.split(|&b| b == b'\n').collect();
        let text_lines: Vec<String> = text
            .iter()
            .enumerate()
            .map(|(i, line)| {
                let caret = if i + 1 == text.len() { "_" } else { "" };
                format!("| {}{caret}", String::from_utf8_lossy(line))
            })
            .collect();
        let suggestions: Vec<String> = (self.offers().enumerate())
            .map(|(i, (text, tag))| {
                let mark = if i == self.mark { ">" } else { " " };
                format!("{mark} {}. {}{tag}", i + 1, String::from_utf8_lossy(text))
            })
            .collect();
        let status = self.status();
        // Rows for each part, the most needed first: the line being typed, the status, the
        // first suggestion, the other suggestions, older text, the title, then the help and
        // the blank lines between parts.
        let mut left = rows;
        let mut take = |wanted: usize| {
            let n = wanted.min(left);
            left -= n;
            n
        };
        let typing = take(1);
        let status_rows = take(1);
        let first = take(suggestions.len().min(1));
        let more = take(suggestions.len().saturating_sub(1));
        let older = take(text_lines.len().min(TEXT_LINES).saturating_sub(1));
        let title_rows = take(1);
        let help_rows = take(1);
        let blanks = take(3);
        let mut lines = Vec::new();
        lines.extend(std::iter::repeat_n(title.to_string(), title_rows));
        if help_rows > 0 {
            lines.push(
                "Tab: take the marked suggestion  Up/Down: move the mark  Enter: new line  \
                 Backspace: delete  Ctrl-X: forget what was learned  Esc or Ctrl-C: quit"
                    .to_string(),
            );
        }
        let blank = |lines: &mut Vec<String>, i: usize| {
            if blanks > i {
                lines.push(String::new());
            }
        };
        blank(&mut lines, 0);
        let shown = older + typing;
        lines.extend(
            text_lines[text_lines.len().saturating_sub(shown)..]
                .iter()
                .cloned(),
        );
        blank(&mut lines, 1);
        lines.extend(suggestions.into_iter().take(first + more));
        blank(&mut lines, 2);
        lines.extend(std::iter::repeat_n(status, status_rows));
        for line in &mut lines {
            if let Some((cut, _)) = line.char_indices().nth(cols) {
                line.truncate(cut);
            }
        }
        lines
    }

    fn status(&self) -> String {
        let kept = self.file.as_ref().map_or(String::new(), |f| {
            format!(" (kept in {})", f.path().display())
        });
        format!(
            "key {}, {} steps{}, {} words and {} phrases learned{kept}  {}",
            self.keys,
            self.found.steps,
            if self.found.cut_short {
                " (cut short)"
            } else {
                ""
            },
            self.learned.len(),
            self.learned.phrases().len(),
            self.note
        )
    }

    fn draw(&self, out: &mut impl Write, title: &str) -> io::Result<()> {
        queue!(out, cursor::MoveTo(0, 0), terminal::Clear(ClearType::All))?;
        let (cols, rows) = terminal::size()?;
        let lines = self.lines(title, usize::from(rows), usize::from(cols));
        // No line break after the last line: on the bottom row it would scroll the screen.
        for (i, line) in lines.iter().enumerate() {
            if i > 0 {
                queue!(out, Print("\r\n"))?;
            }
            queue!(out, Print(line))?;
        }
        out.flush()
    }
}

/// Runs `inkling try`.
pub fn run(args: &TryArgs) -> Result<(), HostError> {
    super::checks::count("--count", args.count)?;
    if !io::stdin().is_terminal() || !io::stdout().is_terminal() {
        return Err(HostError::Usage(
            "`inkling try` needs an interactive terminal (its input or output is not one); \
             for scripts, `inkling suggest` and `inkling keys` give the same suggestions as \
             text or JSON"
                .into(),
        ));
    }
    let file = ModelFile::open(&args.model)?;
    let title = format!(
        "inkling try: {} ({} engine), {} suggestions",
        args.model.display(),
        file.engine_name(),
        args.count
    );
    let model_error = |source| HostError::Image {
        path: args.model.clone(),
        source,
    };
    let terminal_error = HostError::io("the terminal");
    let (memory_file, learned) = match &args.memory {
        Some(path) => {
            let (file, memory) = MemoryFile::open(path)?;
            (Some(file), memory)
        }
        None => (None, Box::new(HostMemory::new())),
    };
    file.with_weights(|w| {
        let mut memory = session_memory(w.dims(), MAX_COUNT);
        let session = memory
            .session::<_, MAX_COUNT, DEFAULT_HISTORY>(w)
            .map_err(model_error)?;
        let options = SearchOptions {
            max_steps: args.max_steps,
            ..SearchOptions::new(args.count)
        };
        let mut screen = Screen::new(session, options, learned, memory_file);
        screen.refresh().map_err(model_error)?;
        let mut run = || -> io::Result<Result<(), inkling_core::Error>> {
            let _raw = RawTerminal::enter()?;
            let mut out = io::stdout();
            loop {
                screen.draw(&mut out, &title)?;
                let key = match event::read()? {
                    Event::Key(k) if k.kind == KeyEventKind::Press => k,
                    _ => continue,
                };
                match screen.key(&key) {
                    Ok(true) => {}
                    Ok(false) => {
                        screen.save_memory();
                        return Ok(Ok(()));
                    }
                    Err(e) => return Ok(Err(e)),
                }
            }
        };
        run().map_err(terminal_error)?.map_err(model_error)
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Runs `test` on a screen over `image` with nothing typed, 3 suggestions and an empty
    /// memory.
    fn with_screen(image: &[u8], test: impl FnOnce(&mut Screen<'_, inkling_core::Model<'_>>)) {
        let model = inkling_core::Model::from_bytes(image).unwrap();
        let mut memory = session_memory(model.dims(), MAX_COUNT);
        let session = memory
            .session::<_, MAX_COUNT, DEFAULT_HISTORY>(model)
            .unwrap();
        let mut screen = Screen::new(
            session,
            SearchOptions::new(3),
            Box::new(HostMemory::new()),
            None,
        );
        test(&mut screen);
    }

    #[test]
    fn a_short_terminal_keeps_the_line_being_typed() {
        with_screen(&inkling_core::image::example::tiny_image(), |screen| {
            screen.text = b"first line\nsecond line\nthird li".to_vec();
            let text = screen.text.clone();
            screen.session.push_bytes(&text).unwrap();
            screen.refresh().unwrap();
            assert_eq!(screen.found.list.len(), 3);
            let full = screen.lines("title", 40, 200);
            assert!(full.iter().any(|l| l == "| first line"));
            for rows in 1..12 {
                let lines = screen.lines("title", rows, 200);
                // Never more lines than rows, so nothing scrolls; the typed line is always there.
                assert!(lines.len() <= rows, "{rows} rows: {lines:?}");
                assert!(
                    lines.iter().any(|l| l == "| third li_"),
                    "{rows} rows: {lines:?}"
                );
            }
            // A narrow terminal cuts lines instead of wrapping them onto more rows.
            assert!(screen
                .lines("title", 40, 8)
                .iter()
                .all(|l| l.chars().count() <= 8));
        });
    }

    #[test]
    fn the_screen_learns_a_name_and_forgets_it_on_request() {
        with_screen(&inkling_core::image::example::tiny_image(), |screen| {
            let offered = |screen: &Screen<'_, _>| {
                screen
                    .found
                    .list
                    .iter()
                    .any(|s| s.text.as_slice() == b"Zorvath")
            };
            screen.type_bytes(b"Zorvath Zorvath Z").unwrap();
            screen.refresh().unwrap();
            assert_eq!(screen.learned.count_of(b"Zorvath"), 2);
            assert!(offered(screen));
            let forget = KeyEvent::new(KeyCode::Char('x'), KeyModifiers::CONTROL);
            assert!(screen.key(&forget).unwrap());
            assert!(screen.learned.is_empty() && !offered(screen));
        });
    }

    #[test]
    fn the_screen_offers_a_repeated_phrase_and_takes_it_with_one_key() {
        with_screen(
            &std::fs::read(concat!(env!("CARGO_MANIFEST_DIR"), "/../models/demo.inkl")).unwrap(),
            |screen| {
                screen
                    .type_bytes(b"Rope bag checked at the hut. Rope bag checked at the hut. Rope b")
                    .unwrap();
                screen.refresh().unwrap();
                let phrase = screen.found.phrase.clone().expect("a phrase offered");
                assert!(phrase.text.starts_with(b"bag checked"), "{phrase:?}");
                // The phrase comes after the words, tagged; Down moves the mark onto it, Tab
                // takes it.
                let lines = screen.lines("title", 40, 200);
                assert!(lines.iter().any(|l| l.ends_with("  (phrase)")), "{lines:?}");
                let down = KeyEvent::new(KeyCode::Down, KeyModifiers::NONE);
                for _ in 0..screen.found.list.len() {
                    assert!(screen.key(&down).unwrap());
                }
                let tab = KeyEvent::new(KeyCode::Tab, KeyModifiers::NONE);
                assert!(screen.key(&tab).unwrap());
                let mut expected =
                    b"Rope bag checked at the hut. Rope bag checked at the hut. Rope ".to_vec();
                expected.extend_from_slice(&phrase.text);
                assert_eq!(screen.text, expected);
                assert!(screen.learned.phrases().len() >= 2);
            },
        );
    }

    #[test]
    fn backspace_deletes_one_utf8_character() {
        // UTF-8 (RFC 3629): "é" is C3 A9, "東" E6 9D B1, "😀" F0 9F 98 80.
        assert_eq!(last_char_len(b"ab"), 1);
        assert_eq!(last_char_len("caf\u{e9}".as_bytes()), 2);
        assert_eq!(last_char_len("\u{6771}".as_bytes()), 3);
        assert_eq!(last_char_len("a\u{1F600}".as_bytes()), 4);
        // A byte that is no character on its own still goes one at a time.
        assert_eq!(last_char_len(b"a\xff"), 1);
        assert_eq!(last_char_len(b"\xe6\x9d"), 1);
    }
}

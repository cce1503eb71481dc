//! `inkling try` driven through a pseudo-terminal: keys in, screen text out. The suggestions
//! it shows are checked against `inkling suggest` on the same text.

use std::io::{Read, Write};
use std::path::Path;
use std::sync::{Arc, Mutex};
use std::time::{Duration, Instant};

use portable_pty::{native_pty_system, Child, CommandBuilder, MasterPty, PtySize};

use inkling_tests::inkling_cli::{inkling_binary, random_image, suggest_json};

/// How long the screen may take to show a key's effect (a search on a tiny model takes
/// milliseconds; the margin is for a loaded machine).
const PATIENCE: Duration = Duration::from_secs(20);

/// Leaving the alternate screen (xterm private mode 1049 reset): the terminal is given back.
const LEAVE: &[u8] = b"\x1b[?1049l";

/// Terminal output without its control sequences (ECMA-48: CSI `ESC [ ... final` with the
/// final byte in 0x40..=0x7E; OSC `ESC ] ... BEL`; other `ESC x` pairs), as text.
fn screen_text(raw: &[u8]) -> String {
    let mut out = Vec::with_capacity(raw.len());
    let mut i = 0;
    while i < raw.len() {
        if raw[i] != 0x1b {
            out.push(raw[i]);
            i += 1;
            continue;
        }
        match raw.get(i + 1) {
            Some(b'[') => {
                i += 2;
                while i < raw.len() && !(0x40..=0x7e).contains(&raw[i]) {
                    i += 1;
                }
                i += 1;
            }
            Some(b']') => {
                while i < raw.len() && raw[i] != 0x07 {
                    i += 1;
                }
                i += 1;
            }
            _ => i += 2,
        }
    }
    String::from_utf8_lossy(&out).into_owned()
}

/// `inkling try` running in a pseudo-terminal, its output collected by a thread.
struct Screen {
    child: Box<dyn Child + Send + Sync>,
    writer: Box<dyn Write + Send>,
    output: Arc<Mutex<Vec<u8>>>,
    _master: Box<dyn MasterPty + Send>,
}

impl Screen {
    fn start(image: &Path) -> Screen {
        let pair = native_pty_system()
            .openpty(PtySize {
                rows: 40,
                cols: 160,
                pixel_width: 0,
                pixel_height: 0,
            })
            .expect("a pseudo-terminal");
        let mut command = CommandBuilder::new(inkling_binary());
        command.args([
            "try".as_ref(),
            image.as_os_str(),
            "--count".as_ref(),
            "3".as_ref(),
        ]);
        command.env("TERM", "xterm");
        let child = pair
            .slave
            .spawn_command(command)
            .expect("inkling try starts");
        drop(pair.slave);
        let mut reader = pair.master.try_clone_reader().expect("pty reader");
        let writer = pair.master.take_writer().expect("pty writer");
        let output = Arc::new(Mutex::new(Vec::new()));
        let sink = Arc::clone(&output);
        std::thread::spawn(move || {
            let mut buf = [0u8; 4096];
            while let Ok(n) = reader.read(&mut buf) {
                if n == 0 {
                    break;
                }
                sink.lock().unwrap().extend_from_slice(&buf[..n]);
            }
        });
        Screen {
            child,
            writer,
            output,
            _master: pair.master,
        }
    }

    fn raw(&self) -> Vec<u8> {
        self.output.lock().unwrap().clone()
    }

    /// The frame whose status line says `key {n},`: from its title line to that status line.
    fn frame_after(&self, n: usize) -> String {
        let status = format!("key {n},");
        let start = Instant::now();
        loop {
            let text = screen_text(&self.raw());
            if let Some(end) = text.find(&status) {
                let begin = text[..end].rfind("inkling try:").unwrap_or(0);
                return text[begin..end].to_string();
            }
            assert!(
                start.elapsed() < PATIENCE,
                "no screen with \"{status}\" after {PATIENCE:?}; the screen so far:\n{text}"
            );
            std::thread::sleep(Duration::from_millis(20));
        }
    }

    /// Whether `bytes` appear in the output within [`PATIENCE`] (the output may still be on
    /// its way after the program has ended).
    fn shows(&self, bytes: &[u8]) -> bool {
        let start = Instant::now();
        while start.elapsed() < PATIENCE {
            if self.raw().windows(bytes.len()).any(|w| w == bytes) {
                return true;
            }
            std::thread::sleep(Duration::from_millis(20));
        }
        false
    }

    fn send(&mut self, keys: &[u8]) {
        self.writer.write_all(keys).expect("keys reach the pty");
        self.writer.flush().expect("keys reach the pty");
    }

    /// Waits for the program to end; its exit status must be success.
    fn ended(&mut self) {
        let start = Instant::now();
        loop {
            if let Some(status) = self.child.try_wait().expect("child status") {
                assert!(status.success(), "inkling try ended with {status:?}");
                return;
            }
            if start.elapsed() > PATIENCE {
                let _ = self.child.kill();
                panic!(
                    "inkling try did not quit; screen:\n{}",
                    screen_text(&self.raw())
                );
            }
            std::thread::sleep(Duration::from_millis(20));
        }
    }
}

/// The texts `inkling suggest` gives for `text` (3 suggestions), as the screen shows them.
fn suggest(image: &Path, text: &str) -> Vec<String> {
    let json = suggest_json(image, text, 3);
    json["suggestions"]
        .as_array()
        .expect("suggestions list")
        .iter()
        .map(|s| s["text"].as_str().expect("suggestion text").to_string())
        .collect()
}

/// The numbered suggestion lines of a frame: `(marked, number, text)`.
fn suggestion_lines(frame: &str) -> Vec<(bool, usize, String)> {
    frame
        .split("\r\n")
        .filter_map(|line| {
            let marked = line.starts_with("> ");
            let rest = line.get(2..)?;
            let (number, text) = rest.split_once(". ")?;
            Some((marked, number.parse().ok()?, text.to_string()))
        })
        .collect()
}

fn texts(lines: &[(bool, usize, String)]) -> Vec<String> {
    lines
        .iter()
        .map(|(_, _, t)| t.trim_end_matches("  (unfinished)").to_string())
        .collect()
}

#[test]
fn typing_shows_suggestions_and_tab_takes_the_marked_one() {
    let dir = tempfile::tempdir().expect("temporary folder");
    let image = random_image(dir.path());
    let mut screen = Screen::start(&image);

    let first = screen.frame_after(0);
    assert_eq!(texts(&suggestion_lines(&first)), suggest(&image, ""));

    // Backspace deletes the last character: the suggestions are those of the shorter text.
    screen.send(b"h");
    screen.frame_after(1);
    screen.send(b"e");
    screen.frame_after(2);
    screen.send(b"\x7f");
    let deleted = screen.frame_after(3);
    assert!(deleted.contains("| h_"), "{deleted}");
    assert_eq!(texts(&suggestion_lines(&deleted)), suggest(&image, "h"));

    screen.send(b"e");
    let typed = screen.frame_after(4);
    assert!(typed.contains("| he_"), "{typed}");
    let lines = suggestion_lines(&typed);
    let expected = suggest(&image, "he");
    assert!(
        !expected.is_empty(),
        "the model offers nothing after \"he\""
    );
    assert_eq!(texts(&lines), expected, "{typed}");
    let numbers: Vec<usize> = lines.iter().map(|l| l.1).collect();
    assert_eq!(numbers, (1..=expected.len()).collect::<Vec<_>>());
    assert!(lines[0].0, "the first suggestion is marked: {typed}");

    // Down moves the mark to the second (or, with one suggestion, around to the first).
    screen.send(b"\x1b[B");
    let moved = screen.frame_after(5);
    let marked = expected.len().min(2) - 1;
    assert!(suggestion_lines(&moved)[marked].0, "{moved}");

    // Tab takes the marked suggestion: the word on screen becomes it, nothing after it.
    screen.send(b"\t");
    let taken = screen.frame_after(6);
    assert!(
        taken.contains(&format!("| {}_", expected[marked])),
        "Tab did not insert {:?}:\n{taken}",
        expected[marked]
    );

    // A space ends the word; the next word is offered.
    screen.send(b" ");
    let spaced = screen.frame_after(7);
    assert!(
        spaced.contains(&format!("| {} _", expected[marked])),
        "{spaced}"
    );
    assert!(!suggestion_lines(&spaced).is_empty(), "{spaced}");

    screen.send(b"\x1b");
    screen.ended();
    assert!(screen.shows(LEAVE), "the alternate screen was not left");
}

#[test]
fn ctrl_c_quits_and_restores_the_terminal() {
    let dir = tempfile::tempdir().expect("temporary folder");
    let image = random_image(dir.path());
    let mut screen = Screen::start(&image);
    screen.frame_after(0);
    screen.send(b"\x03");
    screen.ended();
    assert!(screen.shows(LEAVE), "the alternate screen was not left");
}

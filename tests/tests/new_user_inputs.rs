//! What a new user trips over, through the built `inkling` binary: proper names on 12-key,
//! word lists in any case, inputs checked before any work with messages that say what to do,
//! and the wrong kind of file named as what it is.

use std::path::{Path, PathBuf};
use std::process::{Command, Output, Stdio};

use inkling_tests::inkling_cli::{inkling_binary, random_image, run_json};

fn repo_file(rel: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("..").join(rel)
}

/// Runs `inkling ARGS...` with no terminal on stdin and returns what it did.
fn run(args: &[&str]) -> Output {
    Command::new(inkling_binary())
        .args(args)
        .current_dir(repo_file(""))
        .stdin(Stdio::null())
        .output()
        .expect("inkling starts")
}

/// Runs `inkling ARGS...`, insists that it fails with nothing on stdout, and returns stderr.
fn refused(args: &[&str]) -> String {
    let out = run(args);
    let stderr = String::from_utf8_lossy(&out.stderr).into_owned();
    assert!(!out.status.success(), "{args:?} succeeded: {stderr}");
    assert!(
        out.stdout.is_empty(),
        "{args:?} printed before failing: {}",
        String::from_utf8_lossy(&out.stdout)
    );
    stderr
}

/// The first suggestion's text of `inkling ARGS... --json`.
fn first_suggestion(args: &[&str]) -> String {
    let mut all = args.to_vec();
    all.push("--json");
    let v = run_json(all.iter().map(|a| a.as_ref() as &std::ffi::OsStr));
    v["suggestions"][0]["text"]
        .as_str()
        .unwrap_or("")
        .to_string()
}

/// The keys of a word on a 12-key pad, from ITU-T Recommendation E.161 (02/2001), Figure 1
/// (from memory): 2 ABC, 3 DEF, 4 GHI, 5 JKL, 6 MNO, 7 PQRS, 8 TUV, 9 WXYZ.
fn e161_digits(word: &str) -> String {
    const KEYS: [&str; 8] = ["abc", "def", "ghi", "jkl", "mno", "pqrs", "tuv", "wxyz"];
    word.chars()
        .map(|c| {
            let lower = c.to_ascii_lowercase();
            let key = KEYS.iter().position(|k| k.contains(lower)).unwrap();
            char::from(b'2' + key as u8)
        })
        .collect()
}

#[test]
fn twelve_key_entry_types_the_scenarios_proper_names() {
    // Names and phrases from data/scenario/README.md ("Base, this is Tamsel Hut.", "Hi
    // Maren, ", "- Idris", "Aldwen Base"); the keys come from the E.161 table above.
    let demo = repo_file("models/demo.inkl");
    let demo = demo.to_str().unwrap();
    let cases = [
        ("Base, this is ", "Tamsel"),
        ("Base, this is ", "Harrowmere"),
        ("Base, this is ", "Ulvenholt"),
        ("Base, this is ", "Orlan"),
        ("Base, this is ", "Elvaran"),
        ("Hi ", "Maren"),
        ("Over. - ", "Idris"),
    ];
    for (text, name) in cases {
        let digits = e161_digits(name);
        let first = first_suggestion(&["keys", demo, "--digits", &digits, "--text", text]);
        assert_eq!(first, name, "keys {digits} after {text:?}");
    }
    // The case of the first letter is settled at the first key: after "to " the demo model
    // finds a lower-case `a` far likelier than `A`, so with 3 beams the capital has no beam
    // left (the README's limits say so); with 5 it is offered first.
    let (text, name) = ("Handover done at 10:20 to ", "Aldwen");
    let digits = e161_digits(name);
    let with = |count: &str| {
        let args = [
            "keys", demo, "--digits", &digits, "--text", text, "--count", count,
        ];
        first_suggestion(&args)
    };
    assert_eq!(
        with("5"),
        name,
        "keys {digits} after {text:?}, 5 suggestions"
    );
}

#[test]
fn the_bundled_lexicon_completes_capitalised_words() {
    let demo = repo_file("models/demo.inkl");
    let lexicon = repo_file("data/lexicon/scenario-words.txt");
    let (demo, lexicon) = (demo.to_str().unwrap(), lexicon.to_str().unwrap());
    let first = first_suggestion(&[
        "suggest",
        demo,
        "--text",
        "Base, this is Tam",
        "--lexicon",
        lexicon,
    ]);
    assert_eq!(first, "Tamsel");
    // At the start of a message the model's capitalised words pass the lower-case lexicon.
    let first = first_suggestion(&["suggest", demo, "--lexicon", lexicon]);
    assert!(
        first.starts_with(|c: char| c.is_ascii_uppercase()),
        "{first}"
    );
}

#[test]
fn a_denied_word_is_denied_in_every_case() {
    let dir = tempfile::tempdir().unwrap();
    let demo = repo_file("models/demo.inkl");
    let demo = demo.to_str().unwrap();
    // The first word of a message, lower-cased, in a deny list of its own.
    let first = first_suggestion(&["suggest", demo]);
    assert!(
        first.starts_with(|c: char| c.is_ascii_uppercase()),
        "{first}"
    );
    let deny = dir.path().join("deny.txt");
    std::fs::write(
        &deny,
        format!("# a comment line\n{}\n", first.to_lowercase()),
    )
    .unwrap();
    let v = run_json([
        "suggest",
        demo,
        "--count",
        "5",
        "--deny",
        deny.to_str().unwrap(),
        "--json",
    ]);
    let offered: Vec<&str> = (v["suggestions"].as_array().unwrap().iter())
        .map(|s| s["text"].as_str().unwrap())
        .collect();
    assert!(!offered.is_empty());
    assert!(
        offered.iter().all(|w| !w.eq_ignore_ascii_case(&first)),
        "{offered:?}"
    );
}

#[test]
fn counts_follow_one_rule_everywhere() {
    let demo = repo_file("models/demo.inkl");
    let text = repo_file("data/scenario/heldout.txt");
    let train = repo_file("data/scenario/train.txt");
    let (demo, text, train) = (
        demo.to_str().unwrap(),
        text.to_str().unwrap(),
        train.to_str().unwrap(),
    );
    let runs: [&[&str]; 6] = [
        &["suggest", demo, "--count", "0"],
        &["keys", demo, "--digits", "4663", "--count", "0"],
        &[
            "eval",
            demo,
            "--text",
            text,
            "--savings",
            "--baseline-corpus",
            train,
            "--count",
            "0",
        ],
        &["try", demo, "--count", "0"],
        &["bench", demo, "--count", "0"],
        &["suggest", demo, "--count", "17"],
    ];
    for args in runs {
        let stderr = refused(args);
        assert!(stderr.contains("give 1 to 16"), "{args:?}: {stderr}");
    }
    let stderr = refused(&["inspect", demo, "--beams", "1000"]);
    assert!(stderr.contains("--beams 1000: give 1 to 16"), "{stderr}");
}

#[test]
fn amounts_of_zero_are_refused_before_any_work() {
    let demo = repo_file("models/demo.inkl");
    let text = repo_file("data/scenario/heldout.txt");
    let train = repo_file("data/scenario/train.txt");
    let (demo, text, train) = (
        demo.to_str().unwrap(),
        text.to_str().unwrap(),
        train.to_str().unwrap(),
    );
    let stderr = refused(&["bench", demo, "--bytes", "0"]);
    assert!(stderr.contains("--bytes 0"), "{stderr}");
    let stderr = refused(&[
        "eval",
        demo,
        "--text",
        text,
        "--savings",
        "--baseline-corpus",
        train,
        "--max-bytes",
        "0",
    ]);
    assert!(stderr.contains("--max-bytes 0"), "{stderr}");
    let stderr = refused(&["budget", "--flash", "512K", "--ram", "64K", "--clock", "0"]);
    assert!(stderr.contains("--clock 0"), "{stderr}");
    // Zero steps would write an untrained checkpoint with a loss of NaN.
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("zero.safetensors");
    let stderr = refused(&[
        "train",
        train,
        "--out",
        out.to_str().unwrap(),
        "--steps",
        "0",
    ]);
    assert!(stderr.contains("--steps"), "{stderr}");
    assert!(!out.exists());
    // An --out that cannot be written is refused before training, not after.
    let stderr = refused(&[
        "train",
        train,
        "--out",
        "no-such-folder/x.safetensors",
        "--steps",
        "100000",
    ]);
    assert!(
        stderr.contains("the folder no-such-folder does not exist"),
        "{stderr}"
    );
    // A wrong --against fails before the first model is scored (nothing printed first).
    let stderr = refused(&["eval", demo, "--text", text, "--against", "README.md"]);
    assert!(
        stderr.contains("README.md: a text file, not a model"),
        "{stderr}"
    );
}

#[test]
fn word_lists_that_are_not_word_lists_are_refused() {
    let dir = tempfile::tempdir().unwrap();
    let demo = repo_file("models/demo.inkl");
    let demo = demo.to_str().unwrap();
    let stderr = refused(&["suggest", demo, "--lexicon", "README.md"]);
    assert!(
        stderr.contains("README.md: line 3") && stderr.contains("is not one word"),
        "{stderr}"
    );
    let empty = dir.path().join("empty.txt");
    std::fs::write(&empty, "# only a comment\n\n").unwrap();
    let stderr = refused(&["suggest", demo, "--deny", empty.to_str().unwrap()]);
    assert!(stderr.contains("no words in it"), "{stderr}");
    // The bundled demo deny list (with its comment line) is a word list.
    let deny = repo_file("data/lexicon/deny-example.txt");
    assert!(run(&["suggest", demo, "--deny", deny.to_str().unwrap()])
        .status
        .success());
}

#[test]
fn the_wrong_kind_of_file_is_named_as_what_it_is() {
    let stderr = refused(&["inspect", "models/demo.safetensors"]);
    assert!(
        stderr.contains("float checkpoint") && stderr.contains("inkling convert"),
        "{stderr}"
    );
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("x.inkl");
    let stderr = refused(&["convert", "models/demo.inkl", "-o", out.to_str().unwrap()]);
    assert!(stderr.contains("already a packed image"), "{stderr}");
    assert!(!out.exists());
    let stderr = refused(&["suggest", "README.md"]);
    assert!(
        stderr.contains("README.md: a text file, not a model"),
        "{stderr}"
    );
}

#[test]
fn a_checkpoint_whose_header_lies_about_a_length_is_refused_by_tensor_name() {
    let dir = tempfile::tempdir().unwrap();
    random_image(dir.path());
    let checkpoint = dir.path().join("random.safetensors");
    let mut bytes = std::fs::read(&checkpoint).unwrap();
    // safetensors layout: u64 little-endian header length, then the JSON header. Shrink
    // one shape in place (same header length): its data offsets now give 64 bytes for 15
    // f32 elements (60 bytes).
    let header_len = u64::from_le_bytes(bytes[..8].try_into().unwrap()) as usize;
    let header = String::from_utf8(bytes[8..8 + header_len].to_vec()).unwrap();
    let entry = header.find("\"blocks.0.norm\"").expect("a norm tensor");
    let shape = entry + header[entry..].find("[16]").expect("shape [16]");
    bytes[8 + shape..8 + shape + 4].copy_from_slice(b"[15]");
    let lying = dir.path().join("lying.safetensors");
    std::fs::write(&lying, &bytes).unwrap();
    let out = dir.path().join("lying.inkl");
    let stderr = refused(&[
        "convert",
        lying.to_str().unwrap(),
        "-o",
        out.to_str().unwrap(),
    ]);
    assert!(
        stderr.contains("tensor `blocks.0.norm`")
            && stderr.contains("need 60 bytes")
            && stderr.contains("give 64"),
        "{stderr}"
    );
}

#[test]
fn keys_explains_the_keys_without_letters_and_the_longest_word() {
    let demo = repo_file("models/demo.inkl");
    let demo = demo.to_str().unwrap();
    let stderr = refused(&["keys", demo, "--digits", "1"]);
    assert!(
        stderr.contains("key `1`") && stderr.contains("number 1 of the keys pressed"),
        "{stderr}"
    );
    assert!(
        stderr.contains("0 (space), 1 (punctuation), * and #"),
        "{stderr}"
    );
    let nines = "9".repeat(40);
    let stderr = refused(&["keys", demo, "--digits", &nines]);
    assert!(
        stderr.contains("longer than the 32 bytes a word may have") && !stderr.contains("`word`"),
        "{stderr}"
    );
}

#[test]
fn demo_refuses_another_models_checkpoint() {
    let dir = tempfile::tempdir().unwrap();
    random_image(dir.path());
    let other = dir.path().join("random.safetensors");
    let stderr = refused(&["demo", "--checkpoint", other.to_str().unwrap()]);
    assert!(stderr.contains("is not the model of --image"), "{stderr}");
}

#[test]
fn next_shows_bytes_above_ascii_as_escapes() {
    let out = run(&["next", "models/demo.inkl", "--text", "x", "--top", "256"]);
    assert!(out.status.success());
    let text = String::from_utf8(out.stdout).unwrap();
    assert_eq!(text.lines().count(), 256);
    // Latin-1 letters (U+00C0..U+00FF) would be bytes shown as if they were characters.
    assert!(
        !text.chars().any(|c| ('\u{c0}'..='\u{ff}').contains(&c)),
        "{text}"
    );
    assert!(
        text.contains("\\xC3 (starts a 2-byte UTF-8 character)"),
        "{text}"
    );
    assert!(
        text.contains("\\x80 (continues a UTF-8 character)"),
        "{text}"
    );
}

#[test]
fn try_without_a_terminal_says_what_serves_scripts() {
    let stderr = refused(&["try", "models/demo.inkl"]);
    assert!(
        stderr.contains("needs an interactive terminal") && stderr.contains("inkling suggest"),
        "{stderr}"
    );
}

#[test]
fn help_shows_paths_relative_to_the_project() {
    let out = run(&["demo", "--help"]);
    let help = String::from_utf8(out.stdout).unwrap();
    assert!(help.contains("[default: models/demo.inkl]"), "{help}");
    assert!(!help.contains("host-tools"), "{help}");
}

#[test]
fn bench_prints_the_spread_of_its_runs() {
    let dir = tempfile::tempdir().unwrap();
    let image = random_image(dir.path());
    let v = run_json([
        "bench".as_ref(),
        image.as_os_str(),
        "--bytes".as_ref(),
        "64".as_ref(),
        "--count".as_ref(),
        "1".as_ref(),
        "--json".as_ref(),
    ]);
    for key in [
        "step_microseconds_spread",
        "prefill_microseconds_per_byte_spread",
        "keystroke_milliseconds_spread",
    ] {
        let s = &v[key];
        let (min, median, max) = (
            s["min"].as_f64().unwrap(),
            s["median"].as_f64().unwrap(),
            s["max"].as_f64().unwrap(),
        );
        assert!(0.0 < min && min <= median && median <= max, "{key}: {s}");
    }
    assert_eq!(v["repeats"], 5);
}

#[test]
fn convert_says_what_grouped_scales_cost() {
    let dir = tempfile::tempdir().unwrap();
    random_image(dir.path());
    let checkpoint = dir.path().join("random.safetensors");
    let out = dir.path().join("grouped.inkl");
    let v = run_json([
        "convert".as_ref(),
        checkpoint.as_os_str(),
        "-o".as_ref(),
        out.as_os_str(),
        "--group".as_ref(),
        "8".as_ref(),
        "--json".as_ref(),
    ]);
    let warning = v["warnings"][0].as_str().unwrap_or("");
    assert!(warning.contains("portable kernel"), "{v}");
    let help = String::from_utf8(run(&["convert", "--help"]).stdout).unwrap();
    assert!(help.contains("portable kernel"), "{help}");
}

#[test]
fn budget_says_why_nothing_fits() {
    let out = run(&["budget", "--flash", "128K", "--ram", "8K"]);
    assert!(out.status.success());
    let text = String::from_utf8(out.stdout).unwrap();
    assert!(
        text.contains("nothing fits: too little RAM (the smallest shape needs"),
        "{text}"
    );
}

#[test]
fn the_train_option_budget_lists_builds_that_shape() {
    let budget = inkling_tests::inkling_cli::run_json(
        ["budget", "--flash", "256K", "--ram", "64K", "--json"].map(std::ffi::OsStr::new),
    );
    let shape = &budget["shapes"][0];
    let option = shape["train_option"].as_str().unwrap();
    let dims = option.strip_prefix("--shape ").unwrap();
    let dir = tempfile::tempdir().unwrap();
    let corpus = dir.path().join("corpus.txt");
    std::fs::write(&corpus, "the hut is open. the path is clear. ".repeat(200)).unwrap();
    let ckpt = dir.path().join("shape.safetensors");
    let args = [
        "train",
        corpus.to_str().unwrap(),
        "--out",
        ckpt.to_str().unwrap(),
        "--shape",
        dims,
        "--steps",
        "1",
        "--batch",
        "1",
        "--seq-len",
        "16",
        "--json",
    ];
    inkling_tests::inkling_cli::run_json(args.map(std::ffi::OsStr::new));
    let image = dir.path().join("shape.inkl");
    inkling_tests::inkling_cli::convert(&ckpt, &image, &[]);
    let inspect = inkling_tests::inkling_cli::run_json(
        ["inspect", image.to_str().unwrap(), "--json"].map(std::ffi::OsStr::new),
    );
    // The image's multiply-accumulates per byte and size are the budget's for that shape.
    assert_eq!(
        inspect["macs_per_step"], shape["macs_per_step"],
        "{inspect}"
    );
    assert_eq!(
        std::fs::metadata(&image).unwrap().len(),
        shape["image_bytes"].as_u64().unwrap()
    );
}

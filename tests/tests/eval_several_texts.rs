//! `inkling eval` over several texts: one table, each text's figures as a one-text run
//! gives them, the compressors' figures against Python's own compression modules, and the
//! 12-key keystrokes per character counted by hand.

use inkling_tests::inkling_cli::{random_image, run_json};

#[test]
fn several_texts_give_each_texts_own_figures() {
    let dir = tempfile::tempdir().expect("temporary folder");
    let image = random_image(dir.path());
    let a = dir.path().join("a.txt");
    let b = dir.path().join("b.txt");
    std::fs::write(&a, "the hut is open from june to september.\n".repeat(30)).unwrap();
    std::fs::write(
        &b,
        "rescue team leaves the valley at dawn, radio at noon.\n".repeat(20),
    )
    .unwrap();
    let both = run_json(
        ["eval".as_ref(), image.as_os_str()]
            .into_iter()
            .chain([
                "--text".as_ref(),
                a.as_os_str(),
                "--text".as_ref(),
                b.as_os_str(),
            ])
            .chain(["--json".as_ref()]),
    );
    let texts = both["texts"].as_array().expect("a texts array");
    assert_eq!(texts.len(), 2);
    for (path, row) in [&a, &b].into_iter().zip(texts) {
        let one = run_json([
            "eval".as_ref(),
            image.as_os_str(),
            "--text".as_ref(),
            path.as_os_str(),
            "--json".as_ref(),
        ]);
        assert_eq!(one["bits_per_byte"], row["bits_per_byte"]);
        assert_eq!(one["bytes"], row["bytes"]);
        // xz and gzip on the same bytes, against Python's lzma (preset 9 | EXTREME, the
        // xz container) and gzip (level 9) modules: different implementations of the same
        // formats, so within 2% (common practice, no source).
        let text = std::fs::read(path).unwrap();
        let script = "import sys,lzma,gzip; d=sys.stdin.buffer.read(); \
            print(8*len(lzma.compress(d, preset=9|lzma.PRESET_EXTREME))/len(d), \
            8*len(gzip.compress(d, 9))/len(d))";
        let out = std::process::Command::new("python3")
            .args(["-c", script])
            .stdin(std::process::Stdio::piped())
            .stdout(std::process::Stdio::piped())
            .spawn()
            .and_then(|mut c| {
                use std::io::Write;
                c.stdin.take().unwrap().write_all(&text)?;
                c.wait_with_output()
            })
            .expect("python3 runs");
        let figures: Vec<f64> = String::from_utf8_lossy(&out.stdout)
            .split_whitespace()
            .map(|v| v.parse().unwrap())
            .collect();
        for (key, want) in ["xz_bits_per_byte", "gzip_bits_per_byte"]
            .iter()
            .zip(figures)
        {
            let got = row[*key]
                .as_f64()
                .unwrap_or_else(|| panic!("{key} missing: is it installed?"));
            assert!(
                (got - want).abs() <= 0.02 * want,
                "{key}: {got} vs Python's {want}"
            );
        }
    }
}

#[test]
fn keypad_words_first_in_the_dictionary_cost_one_press_per_character() {
    // KSPC (MacKenzie 2002): presses / characters. When each word is the first the
    // dictionary offers for its digits, every letter is one digit press and every space
    // one press, so the dictionary's KSPC is exactly 1. "cat" shares 228 with "act" and
    // "bat": the corpus counts make "cat" the most frequent.
    let dir = tempfile::tempdir().expect("temporary folder");
    let image = random_image(dir.path());
    let text = dir.path().join("text.txt");
    let corpus = dir.path().join("corpus.txt");
    std::fs::write(&text, "the cat sat on the mat").unwrap();
    std::fs::write(&corpus, "the the cat cat act sat on mat").unwrap();
    let v = run_json([
        "eval".as_ref(),
        image.as_os_str(),
        "--text".as_ref(),
        text.as_os_str(),
        "--keypad".as_ref(),
        "--baseline-corpus".as_ref(),
        corpus.as_os_str(),
        "--json".as_ref(),
    ]);
    let dict = &v["keypad"]["dictionary"];
    assert_eq!(dict["words"], 6);
    assert_eq!(dict["first"], 6);
    assert_eq!(dict["presses"], 22);
    assert_eq!(dict["kspc"], 1.0);
    // The untrained model may rank words anyhow, but it cannot do better than 1.
    assert!(v["keypad"]["model"]["kspc"].as_f64().unwrap() >= 1.0);
}

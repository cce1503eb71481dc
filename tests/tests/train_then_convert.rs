//! A tiny training run through the `inkling` command: the loss falls, and the checkpoint it
//! writes converts to an image that loads and predicts.

use inkling_tests::inkling_cli::run_json;

#[test]
fn tiny_training_run_converts_and_loads() {
    let dir = tempfile::tempdir().unwrap();
    let corpus = dir.path().join("corpus.txt");
    // A repetitive text a tiny model can learn in a few dozen steps.
    let text = "the hut is open. the path is clear. the hut is warm. ".repeat(400);
    std::fs::write(&corpus, &text).unwrap();
    let ckpt = dir.path().join("tiny.safetensors");
    let summary = run_json([
        "train".as_ref(),
        corpus.as_os_str(),
        "--out".as_ref(),
        ckpt.as_os_str(),
        "--config".as_ref(),
        "tiny".as_ref(),
        "--steps".as_ref(),
        "500".as_ref(),
        "--batch".as_ref(),
        "8".as_ref(),
        "--seq-len".as_ref(),
        "64".as_ref(),
        "--json".as_ref(),
    ]);
    let image = dir.path().join("tiny.inkl");
    run_json([
        "convert".as_ref(),
        ckpt.as_os_str(),
        "-o".as_ref(),
        image.as_os_str(),
        "--json".as_ref(),
    ]);
    let heldout = dir.path().join("heldout.txt");
    std::fs::write(&heldout, "the path is open. the hut is clear. ").unwrap();
    let eval = run_json([
        "eval".as_ref(),
        image.as_os_str(),
        "--text".as_ref(),
        heldout.as_os_str(),
        "--against".as_ref(),
        ckpt.as_os_str(),
        "--json".as_ref(),
    ]);
    let bpb = eval["bits_per_byte"].as_f64().unwrap();
    // An untrained byte model sits near 8 bits per byte (uniform over 256 values); a model
    // that learned this text's handful of words does far better (common practice, no source).
    assert!(
        bpb < 3.0,
        "int8 image of the trained model: {bpb} bits per byte; summary {summary}"
    );
    let float_bpb = eval["against"]["bits_per_byte"].as_f64().unwrap();
    assert!(
        (bpb - float_bpb).abs() < 0.1 * float_bpb,
        "int8 {bpb} vs float {float_bpb}"
    );
}

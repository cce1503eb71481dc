//! The `inkling` binary, run as a subprocess with `--json`.

use std::ffi::OsStr;
use std::path::{Path, PathBuf};
use std::process::Command;

use serde_json::Value;

use crate::logits::PositionLogits;

/// `target/<profile>/inkling`, found next to the test executable (`target/<profile>/deps/`).
/// The test command builds it first with `cargo build --release -p inkling-host`.
pub fn inkling_binary() -> PathBuf {
    let exe = std::env::current_exe().expect("the test executable's path is unknown");
    let deps = exe
        .parent()
        .expect("the test executable has no parent folder");
    let binary = deps
        .join("..")
        .join(format!("inkling{}", std::env::consts::EXE_SUFFIX));
    assert!(
        binary.is_file(),
        "the inkling binary is missing at {}: build it first with \
         `cargo build --release -p inkling-host` (same target dir as the tests)",
        binary.display()
    );
    binary
}

/// Run `inkling ARGS...`, insist on exit status 0 and one JSON object on stdout, and return it.
pub fn run_json<I, S>(args: I) -> Value
where
    I: IntoIterator<Item = S>,
    S: AsRef<OsStr>,
{
    let mut command = Command::new(inkling_binary());
    command.args(args);
    let shown = format!("{command:?}");
    let output = command
        .output()
        .unwrap_or_else(|e| panic!("could not start {shown}: {e}"));
    assert!(
        output.status.success(),
        "{shown} failed ({}):\n{}",
        output.status,
        String::from_utf8_lossy(&output.stderr)
    );
    serde_json::from_slice(&output.stdout).unwrap_or_else(|e| {
        panic!(
            "{shown} printed no single JSON object ({e}):\n{}",
            String::from_utf8_lossy(&output.stdout)
        )
    })
}

/// `inkling suggest IMAGE --text TEXT --count COUNT --json`.
pub fn suggest_json(image: &Path, text: &str, count: usize) -> Value {
    run_json([
        "suggest".as_ref(),
        image.as_os_str(),
        "--text".as_ref(),
        text.as_ref(),
        "--count".as_ref(),
        count.to_string().as_ref(),
        "--json".as_ref(),
    ])
}

/// `inkling next MODEL --text TEXT --json --all-positions [EXTRA...]`; MODEL is a checkpoint
/// (float engine) or an image (int8 engine).
pub fn next_all_positions(model: &Path, text: &str, extra: &[&OsStr]) -> PositionLogits {
    let mut args: Vec<&OsStr> = vec![
        OsStr::new("next"),
        model.as_os_str(),
        OsStr::new("--text"),
        OsStr::new(text),
        OsStr::new("--json"),
        OsStr::new("--all-positions"),
    ];
    args.extend_from_slice(extra);
    let json = run_json(args);
    let source = format!("inkling next {}", model.display());
    let logits = PositionLogits::from_json(&json, text.len(), &source);
    assert_eq!(
        logits.per_position.last(),
        Some(&logits.last),
        "{source}: \"logits\" differs from the last row of \"per_position\""
    );
    logits
}

/// `inkling convert CKPT -o IMAGE [EXTRA...] --json`; returns the report.
pub fn convert(checkpoint: &Path, image: &Path, extra: &[&OsStr]) -> Value {
    let mut args: Vec<&OsStr> = vec![
        OsStr::new("convert"),
        checkpoint.as_os_str(),
        OsStr::new("-o"),
        image.as_os_str(),
    ];
    args.extend_from_slice(extra);
    args.push(OsStr::new("--json"));
    let report = run_json(args);
    assert!(
        report["tensors"].as_array().is_some_and(|t| !t.is_empty()),
        "convert {}: no \"tensors\" list in the report {report}",
        checkpoint.display()
    );
    report
}

/// A small random model (1 block, D 16, I 24, N 4, K 2, untied head), converted to an image
/// in `dir`: its predictions mean nothing, but every command runs on it in milliseconds.
pub fn random_image(dir: &Path) -> PathBuf {
    let spec = crate::checkpoint_spec::CheckpointSpec {
        d: 16,
        i: 24,
        n: 4,
        k: 2,
        r: 1,
        blocks: 1,
        tied: false,
        dtype: crate::checkpoint_spec::Dtype::F32,
        seed: crate::run_seed::base_seed(),
    };
    let checkpoint = dir.join("random.safetensors");
    let image = dir.join("random.inkl");
    crate::numpy_reference::make_checkpoint(&spec, &checkpoint);
    convert(&checkpoint, &image, &[]);
    image
}

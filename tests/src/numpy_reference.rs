//! The Python scripts under `tests/reference/` (numpy only), run with `python3`.

use std::path::{Path, PathBuf};
use std::process::Command;

use crate::checkpoint_spec::CheckpointSpec;
use crate::logits::PositionLogits;

/// `tests/reference/`.
pub fn reference_dir() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("reference")
}

/// Run `python3 tests/reference/SCRIPT ARGS...`, insist on success and return stdout.
pub fn run_script<S: AsRef<std::ffi::OsStr>>(script: &str, args: &[S]) -> Vec<u8> {
    let mut command = Command::new("python3");
    command.arg(reference_dir().join(script)).args(args);
    let shown = format!("{command:?}");
    let output = command.output().unwrap_or_else(|e| {
        panic!("could not start {shown}: {e} (python3 with numpy must be on PATH)")
    });
    assert!(
        output.status.success(),
        "{shown} failed ({}):\n{}{}",
        output.status,
        String::from_utf8_lossy(&output.stdout),
        String::from_utf8_lossy(&output.stderr)
    );
    output.stdout
}

/// Write the random checkpoint `spec` to `out`.
pub fn make_checkpoint(spec: &CheckpointSpec, out: &Path) {
    make_checkpoint_with(spec, out, &[]);
}

/// Write the random checkpoint `spec` to `out` with more options of `make_checkpoint.py`
/// (e.g. `--layout reference-code`, `--extra-rows 8`).
pub fn make_checkpoint_with(spec: &CheckpointSpec, out: &Path, options: &[&str]) {
    let mut args = spec.script_args();
    args.extend(options.iter().map(|o| o.to_string()));
    args.extend(["-o".into(), out.display().to_string()]);
    run_script("make_checkpoint.py", &args);
}

/// Write `spec` to `out`, the same values under foreign names to `mapped_out`, and the TOML
/// name mapping (schema name = foreign name) to `map_file`: one line per tensor, or with
/// `pattern` one `{block}` line per role.
pub fn make_mapped_checkpoint(
    spec: &CheckpointSpec,
    out: &Path,
    mapped_out: &Path,
    map_file: &Path,
    pattern: bool,
) {
    let mut args = spec.script_args();
    if pattern {
        args.push("--map-pattern".into());
    }
    for (flag, path) in [
        ("-o", out),
        ("--mapped-out", mapped_out),
        ("--map-file", map_file),
    ] {
        args.push(flag.into());
        args.push(path.display().to_string());
    }
    run_script("make_checkpoint.py", &args);
}

/// The float64 reference's logits for `text` on `checkpoint`; the text travels through a file
/// in `scratch` so its bytes arrive unchanged.
pub fn reference_logits(checkpoint: &Path, text: &[u8], scratch: &Path) -> PositionLogits {
    let text_file = scratch.join("reference-input.txt");
    std::fs::write(&text_file, text)
        .unwrap_or_else(|e| panic!("cannot write {}: {e}", text_file.display()));
    let stdout = run_script(
        "selective_ssm_numpy.py",
        &[
            checkpoint.as_os_str(),
            "--text-file".as_ref(),
            text_file.as_os_str(),
        ],
    );
    let json = serde_json::from_slice(&stdout)
        .unwrap_or_else(|e| panic!("selective_ssm_numpy.py printed no JSON ({e})"));
    PositionLogits::from_json(&json, text.len(), "selective_ssm_numpy.py")
}

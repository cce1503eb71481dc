//! Puts the memory layout of the target's core (`memory/cortex-m.x` for Arm,
//! `memory/riscv.x` for RISC-V) on the linker's search path as `memory.x`, and picks the model
//! image that is built into flash: the file named by `INKLING_IMAGE` (relative paths are taken
//! from the package's folder), or `../models/demo.inkl`, the bundled demo model; and the word
//! lists built into flash beside it: the deny list named by `INKLING_DENY` (default
//! `../data/lexicon/deny-callouts.txt`; empty: none) and the lexicon named by
//! `INKLING_LEXICON` (default and empty: none). The board profiles (`boards/`) run this
//! script too, for their image, word lists and buffer sizes.

use std::env;
use std::fs;
use std::path::{Path, PathBuf};

const DEFAULT_IMAGE: &str = "../models/demo.inkl";

/// The deny list built in when `INKLING_DENY` is not set: the demo's placeholder list.
const DEFAULT_DENY_LIST: &str = "../data/lexicon/deny-callouts.txt";

/// Suggestions per keystroke, and so beams of the session (passed on to main.rs).
const SUGGESTIONS: usize = 3;

/// Bytes one prefill pass takes at once in the engine's prefill figure (passed on to
/// main.rs). Each pass reads every matrix once and runs pairs of bytes through the two-vector
/// kernel. The session keeps its states in 16-bit floats and so feeds one byte a pass: its
/// scratch is the one-byte size, and the work space of the passes is borrowed from the
/// session's buffer before the session takes it; only the activation scratch is sized for
/// the passes (`Dims::act_len()` i16 per byte, 256 B per byte for the demo model).
const PREFILL_CHUNK: usize = 4;

/// Bytes one pass of a phrase draft's verification takes in `memory_reboot` (passed on to
/// it as `draft_sizes.rs`): its session's scratch is sized for passes of this many bytes,
/// about 3 KB of work space a byte for the demo model.
const DRAFT_CHUNK: usize = 8;

fn main() {
    // The library alone, built for a board profile (its `qemu` feature off), needs neither
    // an image nor a memory layout: the profile's own run of this script gives them.
    let library_only = env::var("CARGO_PKG_NAME").is_ok_and(|p| p == "inkling-firmware-example")
        && env::var_os("CARGO_FEATURE_QEMU").is_none();
    if library_only {
        return;
    }
    let manifest =
        PathBuf::from(env::var_os("CARGO_MANIFEST_DIR").expect("cargo sets CARGO_MANIFEST_DIR"));
    let out = PathBuf::from(env::var_os("OUT_DIR").expect("cargo sets OUT_DIR"));

    // The memory layout for the target's core, as memory.x next to link.x (from cortex-m-rt
    // or riscv-rt), so `-Tlink.x` finds it. (Not in this folder: the linker would look here
    // first.) A board profile that runs this script (`boards/`) has its own memory.x in its
    // folder, or its HAL's.
    if manifest.join("memory").is_dir() {
        let layout = match env::var("CARGO_CFG_TARGET_ARCH").as_deref() {
            Ok("riscv32") => "memory/riscv.x",
            _ => "memory/cortex-m.x",
        };
        fs::copy(manifest.join(layout), out.join("memory.x"))
            .unwrap_or_else(|e| panic!("{layout}: {e}"));
        println!("cargo:rustc-link-search={}", out.display());
        println!("cargo:rerun-if-changed={layout}");
    }
    if env::var_os("CARGO_FEATURE_DEFMT").is_some() {
        println!("cargo:rustc-link-arg-bins=-Tdefmt.x");
    }

    println!("cargo:rerun-if-env-changed=INKLING_IMAGE");
    let chosen =
        env::var_os("INKLING_IMAGE").map_or_else(|| PathBuf::from(DEFAULT_IMAGE), PathBuf::from);
    let image = manifest.join(chosen);
    let on_device = env::var("CARGO_CFG_TARGET_OS").is_ok_and(|os| os == "none");
    if on_device && !image.is_file() {
        panic!(
            "the model image {} does not exist: set INKLING_IMAGE to a .inkl file \
             (made by `inkling convert`)",
            image.display()
        );
    }
    println!("cargo:rerun-if-changed={}", image.display());
    println!("cargo:rustc-env=INKLING_IMAGE_FILE={}", image.display());
    if on_device {
        write_buffer_sizes(&image, &out);
        write_word_lists(&manifest, &out);
    }
}

/// The word list named by the variable `name` (`default` when it is not set; none when it is
/// empty), checked now in the core's word list format so that a bad list fails the build,
/// naming its line; as the expression that puts its bytes in flash.
fn word_list_bytes(manifest: &Path, name: &str, default: Option<&str>) -> Option<String> {
    println!("cargo:rerun-if-env-changed={name}");
    let chosen = env::var_os(name).map_or_else(
        || default.map(PathBuf::from),
        |v| (!v.is_empty()).then(|| PathBuf::from(v)),
    )?;
    let path = manifest.join(chosen);
    let bytes =
        fs::read(&path).unwrap_or_else(|e| panic!("{name}: reading {}: {e}", path.display()));
    if let Err(e) = inkling_core::session::WordList::new(&bytes) {
        panic!(
            "{name}: {} is not a word list in the core's format (one word a line, sorted \
             ascending bytewise after folding case, no comments or empty lines; `inkling \
             suggest --deny` takes it as it is): {e}",
            path.display()
        );
    }
    println!("cargo:rerun-if-changed={}", path.display());
    let text = path
        .to_str()
        .unwrap_or_else(|| panic!("{name}: the path {} is not UTF-8", path.display()));
    Some(format!("include_bytes!({text:?})"))
}

/// Writes `word_lists.rs`: the static `WORD_LISTS`, the deny list and the lexicon put in
/// flash with `include_bytes!`, as they are (nothing is copied to RAM).
fn write_word_lists(manifest: &Path, out: &Path) {
    let deny = word_list_bytes(manifest, "INKLING_DENY", Some(DEFAULT_DENY_LIST));
    let lexicon = word_list_bytes(manifest, "INKLING_LEXICON", None);
    let text = format!(
        "/// The word lists built into flash (`INKLING_DENY`, `INKLING_LEXICON`).\n\
         static WORD_LISTS: inkling_firmware_example::flash_word_lists::FlashWordLists =\n    \
         inkling_firmware_example::flash_word_lists::FlashWordLists {{\n        \
         deny: {},\n        lexicon: {},\n    }};\n",
        deny.as_deref().unwrap_or("b\"\""),
        lexicon.map_or_else(|| "None".to_string(), |l| format!("Some({l})")),
    );
    let path = out.join("word_lists.rs");
    fs::write(&path, text).unwrap_or_else(|e| panic!("writing {}: {e}", path.display()));
}

/// Validates the image now (a bad one fails the build, not the device) and writes the
/// sizes of the buffers it needs, so RAM is exactly what this model takes: a session's
/// (`session_sizes.rs`, every program), the prefill passes' the harness measures
/// (`harness_sizes.rs`) and the phrase drafts' passes of `memory_reboot` (`draft_sizes.rs`).
fn write_buffer_sizes(image: &Path, out: &Path) {
    let bytes = fs::read(image).unwrap_or_else(|e| panic!("reading {}: {e}", image.display()));
    let model = inkling_core::Model::from_bytes(&bytes)
        .unwrap_or_else(|e| panic!("{} is not a valid model image: {e}", image.display()));
    let dims = model.dims();
    let session = format!(
        "/// Suggestions per keystroke (beams of the session).\n\
         const SUGGESTIONS: usize = {SUGGESTIONS};\n\
         /// f32 elements of the session's buffer (live, snapshot, {SUGGESTIONS} beams) for the \
         built-in image.\n\
         const SESSION_FLOATS: usize = {};\n\
         /// f32 elements of engine work space for the built-in image, one byte a pass.\n\
         const WORK_LEN: usize = {};\n\
         /// i16 elements of activation scratch for the built-in image, one byte a pass.\n\
         const ACT_LEN: usize = {};\n",
        dims.session_floats(SUGGESTIONS),
        dims.work_len(),
        dims.act_len(),
    );
    let harness = format!(
        "/// f32 elements of engine work space for prefill passes of {PREFILL_CHUNK} bytes.\n\
         const CHUNK_WORK_LEN: usize = {};\n\
         /// i16 elements of activation scratch for prefill passes of {PREFILL_CHUNK} bytes.\n\
         const CHUNK_ACT_LEN: usize = {};\n",
        dims.chunk_work_len(PREFILL_CHUNK),
        dims.chunk_act_len(PREFILL_CHUNK),
    );
    let draft = format!(
        "/// Bytes a pass of a phrase draft's verification takes.\n\
         const DRAFT_CHUNK: usize = {DRAFT_CHUNK};\n\
         /// f32 elements of engine work space for passes of {DRAFT_CHUNK} bytes.\n\
         const DRAFT_WORK_LEN: usize = {};\n\
         /// i16 elements of activation scratch for passes of {DRAFT_CHUNK} bytes.\n\
         const DRAFT_ACT_LEN: usize = {};\n",
        dims.chunk_work_len(DRAFT_CHUNK),
        dims.chunk_act_len(DRAFT_CHUNK),
    );
    for (name, text) in [
        ("session_sizes.rs", session),
        ("harness_sizes.rs", harness),
        ("draft_sizes.rs", draft),
    ] {
        let path = out.join(name);
        fs::write(&path, text).unwrap_or_else(|e| panic!("writing {}: {e}", path.display()));
    }
}

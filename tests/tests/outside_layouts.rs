//! Checkpoints in the layouts of the published Mamba reference code and of its model-hub port
//! (written by the numpy writer `tests/reference/make_checkpoint.py`, which lays out the
//! safetensors container by hand from its published description and BF16 as u16 bit patterns),
//! converted with no map, against the float64 numpy reference of the published equations
//! (`selective_ssm_numpy.py`, which reads those names itself); the export back to those
//! layouts; the `{block}` name map; and every refusal, by name.

use std::ffi::OsStr;
use std::path::{Path, PathBuf};
use std::process::Command;

use inkling_core::image::checksum::crc32;
use inkling_tests::checkpoint_spec::{CheckpointSpec, Dtype};
use inkling_tests::inkling_cli::{convert, inkling_binary, next_all_positions, run_json};
use inkling_tests::logits::relative_difference;
use inkling_tests::numpy_reference::{
    make_checkpoint, make_checkpoint_with, make_mapped_checkpoint, reference_logits,
};
use inkling_tests::run_seed::base_seed;
use inkling_tests::MIXED_TEXT;
use serde_json::Value;

/// f32 arithmetic against float64 over a few blocks; the task's bound, as for the schema's
/// own names in `reference_numpy.rs` (common practice, no source).
const MAX_RELATIVE_DIFFERENCE: f64 = 1e-4;

const REFERENCE: &str = "reference-code";
const HUB: &str = "model-hub";

fn spec(d: usize, i: usize, n: usize, blocks: usize, tied: bool, dtype: Dtype) -> CheckpointSpec {
    CheckpointSpec {
        d,
        i,
        n,
        k: 4,
        r: 2,
        blocks,
        tied,
        dtype,
        seed: base_seed(),
    }
}

/// The float engine's logits on `checkpoint` against the numpy reference's, after every byte.
fn assert_matches_numpy(checkpoint: &Path, what: &str, scratch: &Path) -> f64 {
    let expected = reference_logits(checkpoint, MIXED_TEXT.as_bytes(), scratch);
    let got = next_all_positions(checkpoint, MIXED_TEXT, &[]);
    let mut worst = 0.0f64;
    for (j, (a, r)) in got
        .per_position
        .iter()
        .zip(&expected.per_position)
        .enumerate()
    {
        let difference = relative_difference(a, r);
        assert!(
            difference <= MAX_RELATIVE_DIFFERENCE,
            "{what}: after byte {j}, max|engine - numpy| / max|numpy| = {difference:.3e}"
        );
        worst = worst.max(difference);
    }
    worst
}

/// The image without its source record, as format.rs specifies a 1.0 image: minor version 0,
/// the length 16 bytes shorter, the record's 16 bytes gone, the CRC-32 over the rest. Also
/// returns the record's layout code.
fn without_source_record(image: &[u8]) -> (Vec<u8>, u16) {
    assert_eq!(image[6..8], [1, 0], "not a 1.1 image");
    let record = image.len() - 4 - 16;
    assert_eq!(&image[record..record + 4], b"FROM", "no source record tag");
    assert!(image[record + 6..record + 16].iter().all(|&b| b == 0));
    let code = u16::from_le_bytes([image[record + 4], image[record + 5]]);
    let mut plain = image[..record].to_vec();
    plain[6..8].copy_from_slice(&0u16.to_le_bytes());
    plain[8..12].copy_from_slice(&((record + 4) as u32).to_le_bytes());
    let crc = crc32(&plain);
    plain.extend_from_slice(&crc.to_le_bytes());
    (plain, code)
}

/// The record's code for a layout name (format.rs, `SourceLayout`).
fn code_of(layout: &str) -> u16 {
    match layout {
        REFERENCE => 1,
        _ => 2,
    }
}

fn read(path: &Path) -> Vec<u8> {
    std::fs::read(path).unwrap_or_else(|e| panic!("{}: {e}", path.display()))
}

/// `inkling ARGS` must fail, naming every one of `named` on stderr, and write no `out`.
fn refused(args: &[&OsStr], out: &Path, named: &[&str]) -> String {
    let output = Command::new(inkling_binary())
        .args(args)
        .output()
        .expect("run inkling");
    let stderr = String::from_utf8_lossy(&output.stderr).to_string();
    assert!(!output.status.success(), "{args:?} was accepted");
    assert_ne!(
        output.status.code(),
        Some(101),
        "{args:?} panicked:\n{stderr}"
    );
    for n in named {
        assert!(
            stderr.contains(n),
            "{args:?}: `{n}` is not named in:\n{stderr}"
        );
    }
    assert!(!out.exists(), "{args:?}: an output file was written");
    stderr
}

fn adjustments(report: &Value) -> Vec<String> {
    report["adjustments"]
        .as_array()
        .expect("an adjustments list")
        .iter()
        .map(|a| a.as_str().expect("a string").to_string())
        .collect()
}

#[test]
fn outside_layouts_in_every_dtype_match_the_numpy_reference() {
    let dir = tempfile::tempdir().expect("temporary folder");
    let cases = [
        (REFERENCE, spec(24, 40, 8, 2, true, Dtype::F32), false),
        (REFERENCE, spec(32, 48, 16, 1, false, Dtype::F16), true),
        (REFERENCE, spec(16, 36, 4, 3, true, Dtype::Bf16), false),
        (HUB, spec(20, 44, 8, 2, false, Dtype::F32), true),
        (HUB, spec(24, 40, 5, 2, true, Dtype::F16), false),
        (HUB, spec(32, 64, 16, 1, true, Dtype::Bf16), true),
    ];
    for (index, (layout, spec, no_metadata)) in cases.into_iter().enumerate() {
        let what = format!("{layout} {spec}");
        let checkpoint = dir.path().join(format!("case{index}.safetensors"));
        let mut options = vec!["--layout", layout];
        if no_metadata {
            // As an outside trainer writes it: no norm_eps, so both read their default 1e-5.
            options.push("--no-metadata");
        }
        make_checkpoint_with(&spec, &checkpoint, &options);
        let worst = assert_matches_numpy(&checkpoint, &what, dir.path());
        println!("{what}: worst relative logit difference {worst:.2e}");

        let image = dir.path().join(format!("case{index}.inkl"));
        let report = convert(&checkpoint, &image, &[]);
        assert_eq!(
            report["layout"], layout,
            "{what}: convert recognised another layout"
        );
        let shown = run_json(["inspect".as_ref(), image.as_os_str(), "--json".as_ref()]);
        assert_eq!(shown["source_layout"], layout, "{what}: inspect");
        assert_eq!(shown["version"], "1.1", "{what}: inspect");
        // The model-hub port writes a tied head out; it is stored once.
        let tied_written = layout == HUB && spec.tied;
        assert_eq!(
            adjustments(&report)
                .iter()
                .any(|a| a.contains("lm_head.weight") && a.contains("tied")),
            tied_written,
            "{what}: {report}"
        );
        assert_eq!(shown["dims"]["tied_head"], spec.tied, "{what}");
    }
}

#[test]
fn an_outside_layout_converts_to_the_schemas_image_but_for_the_source_record() {
    let dir = tempfile::tempdir().expect("temporary folder");
    for (layout, tied) in [(REFERENCE, false), (HUB, true)] {
        let spec = spec(24, 40, 8, 2, tied, Dtype::F16);
        let ours = dir.path().join(format!("{layout}-ours.safetensors"));
        let theirs = dir.path().join(format!("{layout}-theirs.safetensors"));
        make_checkpoint(&spec, &ours);
        make_checkpoint_with(&spec, &theirs, &["--layout", layout]);
        let (a, b) = (dir.path().join("ours.inkl"), dir.path().join("theirs.inkl"));
        convert(&ours, &a, &[]);
        convert(&theirs, &b, &[]);
        let (plain, code) = without_source_record(&read(&b));
        assert_eq!(code, code_of(layout));
        assert!(
            plain == read(&a),
            "{layout}: the images differ in more than the record"
        );
    }
}

#[test]
fn export_then_convert_gives_the_same_image_bit_for_bit() {
    let dir = tempfile::tempdir().expect("temporary folder");
    for (layout, tied, dtype) in [
        (REFERENCE, true, Dtype::Bf16),
        (REFERENCE, false, Dtype::F32),
        (HUB, true, Dtype::F16),
        (HUB, false, Dtype::Bf16),
    ] {
        let spec = spec(20, 36, 6, 2, tied, dtype);
        let what = format!("{layout} {spec}");
        let ours = dir.path().join("ours.safetensors");
        let exported = dir.path().join(format!("{layout}.safetensors"));
        make_checkpoint(&spec, &ours);
        let written = run_json([
            "convert".as_ref(),
            ours.as_os_str(),
            "--to".as_ref(),
            layout.as_ref(),
            "-o".as_ref(),
            exported.as_os_str(),
            "--json".as_ref(),
        ]);
        assert_eq!(written["out_layout"], layout, "{what}");
        // The exported file is read by the numpy reference through its own reading of the
        // layout's names: the model it describes is the one we had.
        assert_matches_numpy(&exported, &what, dir.path());

        let (direct, round_trip) = (dir.path().join("direct.inkl"), dir.path().join("rt.inkl"));
        convert(&ours, &direct, &[]);
        let report = convert(&exported, &round_trip, &[]);
        assert_eq!(report["layout"], layout, "{what}");
        let (plain, code) = without_source_record(&read(&round_trip));
        assert_eq!(code, code_of(layout), "{what}");
        assert!(
            plain == read(&direct),
            "{what}: the round trip changed the image"
        );
        // And the float engine reads the two checkpoints to the same bits.
        let a = next_all_positions(&ours, MIXED_TEXT, &[]);
        let b = next_all_positions(&exported, MIXED_TEXT, &[]);
        assert_eq!(a.per_position, b.per_position, "{what}");
    }
}

#[test]
fn rows_past_256_are_refused_unless_cut_and_the_cut_is_reported() {
    let dir = tempfile::tempdir().expect("temporary folder");
    let spec = spec(16, 24, 4, 1, false, Dtype::F32);
    let padded = dir.path().join("padded.safetensors");
    let exact = dir.path().join("exact.safetensors");
    make_checkpoint_with(
        &spec,
        &padded,
        &["--layout", REFERENCE, "--extra-rows", "8"],
    );
    make_checkpoint_with(&spec, &exact, &["--layout", REFERENCE]);
    let out = dir.path().join("padded.inkl");
    refused(
        &[
            "convert".as_ref(),
            padded.as_os_str(),
            "-o".as_ref(),
            out.as_os_str(),
        ],
        &out,
        &[
            "backbone.embedding.weight",
            "264 rows",
            "--cut-rows",
            "schema.rs",
        ],
    );
    let report = convert(&padded, &out, &[OsStr::new("--cut-rows")]);
    let cut = adjustments(&report);
    for name in ["backbone.embedding.weight", "lm_head.weight"] {
        assert!(
            cut.iter()
                .any(|a| a.contains(name) && a.contains("rows 256..264 cut (8 rows)")),
            "{name} not reported cut: {cut:?}"
        );
    }
    let exact_image = dir.path().join("exact.inkl");
    convert(&exact, &exact_image, &[]);
    assert!(
        read(&out) == read(&exact_image),
        "cutting left other values"
    );
}

#[test]
fn projection_biases_are_dropped_when_zero_and_refused_otherwise() {
    let dir = tempfile::tempdir().expect("temporary folder");
    let spec = spec(16, 24, 4, 2, true, Dtype::F16);
    let zero = dir.path().join("zero.safetensors");
    make_checkpoint_with(&spec, &zero, &["--layout", HUB, "--proj-bias", "zero"]);
    // The numpy reference adds the biases, as the published block does.
    assert_matches_numpy(&zero, "zero biases", dir.path());
    let report = convert(&zero, &dir.path().join("zero.inkl"), &[]);
    let dropped = adjustments(&report)
        .iter()
        .filter(|a| a.contains("_proj.bias") && a.contains("all zeros"))
        .count();
    assert_eq!(dropped, 4, "two biases in each of two blocks: {report}");

    let random = dir.path().join("random.safetensors");
    make_checkpoint_with(&spec, &random, &["--layout", HUB, "--proj-bias", "random"]);
    let out = dir.path().join("random.inkl");
    refused(
        &[
            "convert".as_ref(),
            random.as_os_str(),
            "-o".as_ref(),
            out.as_os_str(),
        ],
        &out,
        &["backbone.layers.0.mixer.in_proj.bias", "not zero"],
    );
}

#[test]
fn other_outside_checkpoints_are_refused_by_name() {
    let dir = tempfile::tempdir().expect("temporary folder");
    let spec = spec(16, 24, 4, 2, false, Dtype::Bf16);
    let cases: [(&str, &[&str], &[&str]); 3] = [
        // Trained with layer norm: a norm with a bias.
        (
            "layer-norm",
            &["--norm-bias"],
            &["backbone.layers.0.norm.bias", "layer norm"],
        ),
        // One A_log per channel or head: not this block's equations.
        (
            "a-log-vector",
            &["--a-log-vector"],
            &["backbone.layers.0.mixer.A_log", "Mamba-2"],
        ),
        // A tensor missing, named as the layout names it.
        (
            "missing-skip",
            &["--drop", "backbone.layers.1.mixer.D"],
            &[
                "backbone.layers.1.mixer.D",
                "is missing",
                "reference-code layout",
            ],
        ),
    ];
    for (case, options, named) in cases {
        let checkpoint = dir.path().join(format!("{case}.safetensors"));
        let mut all = vec!["--layout", REFERENCE];
        all.extend_from_slice(options);
        make_checkpoint_with(&spec, &checkpoint, &all);
        let out = dir.path().join(format!("{case}.inkl"));
        refused(
            &[
                "convert".as_ref(),
                checkpoint.as_os_str(),
                "-o".as_ref(),
                out.as_os_str(),
            ],
            &out,
            named,
        );
    }
    // A checkpoint with no embedding of any layout names every name it looked for.
    let none = dir.path().join("none.safetensors");
    make_checkpoint_with(
        &spec,
        &none,
        &["--layout", REFERENCE, "--drop", "backbone.embedding.weight"],
    );
    let out = dir.path().join("none.inkl");
    refused(
        &[
            "convert".as_ref(),
            none.as_os_str(),
            "-o".as_ref(),
            out.as_os_str(),
        ],
        &out,
        &[
            "byte_embed",
            "backbone.embedding.weight",
            "backbone.embeddings.weight",
        ],
    );
}

#[test]
fn an_absent_convolution_bias_is_zero() {
    let dir = tempfile::tempdir().expect("temporary folder");
    let spec = spec(16, 24, 4, 1, true, Dtype::F32);
    let checkpoint = dir.path().join("no-conv-bias.safetensors");
    make_checkpoint_with(
        &spec,
        &checkpoint,
        &[
            "--layout",
            REFERENCE,
            "--drop",
            "backbone.layers.0.mixer.conv1d.bias",
        ],
    );
    // A 1-D convolution layer without a bias adds nothing (numpy reads it so, independently).
    assert_matches_numpy(&checkpoint, "no conv bias", dir.path());
    let report = convert(&checkpoint, &dir.path().join("no-conv-bias.inkl"), &[]);
    assert!(
        adjustments(&report)
            .iter()
            .any(|a| a.contains("conv1d.bias") && a.contains("zeros")),
        "{report}"
    );
}

fn map_file(dir: &Path, name: &str, text: &str) -> PathBuf {
    let path = dir.join(name);
    std::fs::write(&path, text).expect("write the map");
    path
}

#[test]
fn a_block_placeholder_map_converts_like_the_original() {
    let dir = tempfile::tempdir().expect("temporary folder");
    let spec = spec(24, 40, 8, 3, false, Dtype::Bf16);
    let (ours, theirs) = (
        dir.path().join("ours.safetensors"),
        dir.path().join("theirs.safetensors"),
    );
    let map = dir.path().join("names.toml");
    make_mapped_checkpoint(&spec, &ours, &theirs, &map, true);
    let text = std::fs::read_to_string(&map).expect("the map");
    // Three whole-model lines and one line per block role, whatever the number of blocks.
    let entries = text.lines().filter(|l| l.starts_with('"')).count();
    assert_eq!(entries, 3 + 10, "{text}");
    let (a, b) = (dir.path().join("ours.inkl"), dir.path().join("theirs.inkl"));
    convert(&ours, &a, &[]);
    let report = convert(&theirs, &b, &[OsStr::new("--map"), map.as_os_str()]);
    assert_eq!(report["layout"], "name-map");
    assert!(read(&a) == read(&b), "the mapped image differs");
}

#[test]
fn map_errors_name_the_line_at_fault() {
    let dir = tempfile::tempdir().expect("temporary folder");
    let spec = spec(16, 24, 4, 1, true, Dtype::F32);
    let (ours, theirs) = (
        dir.path().join("ours.safetensors"),
        dir.path().join("theirs.safetensors"),
    );
    make_mapped_checkpoint(&spec, &ours, &theirs, &dir.path().join("unused.toml"), true);
    let good =
        "[names]\n\"byte_embed\" = \"embedding.weight\"\n\"final_norm\" = \"out_norm.weight\"\n";
    let cases = [
        (
            "unknown-key",
            format!("{good}\"blocks.{{block}}.expnd\" = \"layers.{{block}}.in_proj.weight\"\n"),
            vec!["line 4", "blocks.{block}.expnd", "not a schema name"],
        ),
        (
            "one-sided",
            format!("{good}\"blocks.{{block}}.norm\" = \"layers.0.norm.weight\"\n"),
            vec!["line 4", "{block} must be on both sides"],
        ),
        (
            "same-target",
            format!("{good}\"head\" = \"embedding.weight\"\n"),
            vec!["line 4", "already the target of line 2"],
        ),
        (
            "syntax",
            format!("{good}\"blocks.{{block}}.norm = 3\n"),
            vec!["line 4"],
        ),
        (
            // Maps to a name the checkpoint lacks: the tensor, its target and the line.
            "absent-target",
            format!("{good}\"blocks.{{block}}.norm\" = \"layers.{{block}}.nrm.weight\"\n"),
            vec![
                "blocks.0.norm",
                "layers.0.nrm.weight",
                "line 4",
                "is missing",
            ],
        ),
    ];
    for (case, text, named) in cases {
        let map = map_file(dir.path(), &format!("{case}.toml"), &text);
        let out = dir.path().join(format!("{case}.inkl"));
        let mut expected = named.clone();
        let shown = map.display().to_string();
        expected.push(&shown);
        refused(
            &[
                "convert".as_ref(),
                theirs.as_os_str(),
                "-o".as_ref(),
                out.as_os_str(),
                "--map".as_ref(),
                map.as_os_str(),
            ],
            &out,
            &expected,
        );
    }
}

/// The image with its minor version set to `minor` and its CRC re-sealed.
fn with_minor(image: &[u8], minor: u16) -> Vec<u8> {
    let mut bytes = image.to_vec();
    bytes[6..8].copy_from_slice(&minor.to_le_bytes());
    let body = bytes.len() - 4;
    let crc = crc32(&bytes[..body]);
    bytes[body..].copy_from_slice(&crc.to_le_bytes());
    bytes
}

#[test]
fn a_reader_of_version_1_0_reads_a_1_1_image_and_a_damaged_record_is_refused() {
    let dir = tempfile::tempdir().expect("temporary folder");
    let spec = spec(16, 24, 4, 1, true, Dtype::F32);
    let checkpoint = dir.path().join("hub.safetensors");
    make_checkpoint_with(&spec, &checkpoint, &["--layout", HUB]);
    let image = dir.path().join("hub.inkl");
    convert(&checkpoint, &image, &[]);
    let inspect = |path: &Path| run_json(["inspect".as_ref(), path.as_os_str(), "--json".as_ref()]);
    let as_1_1 = inspect(&image);
    // A 1.0 reader checks what today's reader checks at minor version 0 (format.rs: minor
    // versions only add what old readers may ignore), so the same image read at minor 0 stands
    // for it: it must be accepted, with the same tensors, and no source.
    let old = dir.path().join("as-1.0.inkl");
    std::fs::write(&old, with_minor(&read(&image), 0)).expect("write");
    let as_1_0 = inspect(&old);
    assert_eq!(as_1_0["tensors"], as_1_1["tensors"]);
    assert_eq!(as_1_0["source_layout"], Value::Null);
    assert_eq!(as_1_1["source_layout"], HUB);

    let mut bytes = read(&image);
    let record = bytes.len() - 4 - 16;
    bytes[record] ^= 0x20; // the tag, re-sealed so that only the record is wrong
    let body = bytes.len() - 4;
    let crc = crc32(&bytes[..body]);
    bytes[body..].copy_from_slice(&crc.to_le_bytes());
    let damaged = dir.path().join("damaged.inkl");
    std::fs::write(&damaged, &bytes).expect("write");
    refused(
        &["inspect".as_ref(), damaged.as_os_str()],
        &dir.path().join("no-output"),
        &["source record", &record.to_string()],
    );
}

#[test]
fn the_norm_epsilon_can_be_given_when_the_metadata_lacks_it() {
    let dir = tempfile::tempdir().expect("temporary folder");
    let spec = spec(16, 24, 4, 1, true, Dtype::F32);
    let checkpoint = dir.path().join("bare.safetensors");
    make_checkpoint_with(
        &spec,
        &checkpoint,
        &["--layout", REFERENCE, "--no-metadata"],
    );
    let image = dir.path().join("bare.inkl");
    convert(
        &checkpoint,
        &image,
        &[OsStr::new("--norm-eps"), OsStr::new("0.001")],
    );
    let shown = run_json(["inspect".as_ref(), image.as_os_str(), "--json".as_ref()]);
    let eps = shown["dims"]["norm_eps"].as_f64().expect("norm_eps");
    assert_eq!(eps as f32, 0.001f32);
    let bad = dir.path().join("bad.inkl");
    refused(
        &[
            "convert".as_ref(),
            checkpoint.as_os_str(),
            "-o".as_ref(),
            bad.as_os_str(),
            "--norm-eps".as_ref(),
            "0".as_ref(),
        ],
        &bad,
        &["--norm-eps", "positive"],
    );
}

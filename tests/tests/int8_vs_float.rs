//! The int8 engine (`inkling next IMAGE`) against the float engine on the checkpoint it was
//! converted from, per-row scales and groups of 32, on random checkpoints drawn every run.

use std::ffi::OsStr;

use inkling_tests::checkpoint_spec::{test_shapes, CheckpointSpec};
use inkling_tests::inkling_cli::{convert, next_all_positions};
use inkling_tests::logits::{kl_divergence, top_byte};
use inkling_tests::numpy_reference::make_checkpoint;
use inkling_tests::run_seed::base_seed;
use inkling_tests::MIXED_TEXT;

/// Mean KL(float ‖ int8) over the positions of one text, in nats. From the task brief; a
/// bound of this size is common practice for 8-bit weights, no source.
const MAX_MEAN_KL: f64 = 0.02;
/// Share of positions, pooled over all checkpoints, where both engines pick the same top byte.
/// Rule of thumb, common practice, no source. Pooled because one text of ~40 bytes gives a
/// share in steps of 2.5%, and random heads have near-ties that a fair quantiser may flip.
const MIN_TOP_BYTE_AGREEMENT: f64 = 0.95;
/// A uniform quantiser of N bits on a full-scale uniform signal: SQNR = 6.02·N dB, 48.2 dB for
/// 8 bits (Kester, Analog Devices MT-001; from memory). expand, select and contract are drawn
/// uniformly, each row scaled to its own maximum, so they sit near it; ±3 dB for rows whose
/// maximum falls short of the bound.
const UNIFORM_INT8_SQNR_DB: f64 = 6.02 * 8.0;
const SQNR_TOLERANCE_DB: f64 = 3.0;

fn check_int8_against_float(group: Option<usize>) {
    let dir = tempfile::tempdir().expect("temporary folder");
    let group_text = group.map(|g| g.to_string());
    let extra: Vec<&OsStr> = match &group_text {
        Some(g) => vec![OsStr::new("--group"), OsStr::new(g.as_str())],
        None => Vec::new(),
    };
    // Most widths are not multiples of 32: the last group of a row is short, which is tested too.
    let shapes = test_shapes(base_seed());
    let (mut agree, mut positions) = (0usize, 0usize);
    for (index, spec) in shapes.iter().enumerate() {
        let checkpoint = dir.path().join(format!("shape{index}.safetensors"));
        let image = dir.path().join(format!("shape{index}.inkl"));
        make_checkpoint(spec, &checkpoint);
        let report = convert(&checkpoint, &image, &extra);
        check_sqnr(spec, &report);
        let float = next_all_positions(&checkpoint, MIXED_TEXT, &[]);
        let int8 = next_all_positions(&image, MIXED_TEXT, &[]);
        let kls: Vec<f64> = float
            .per_position
            .iter()
            .zip(&int8.per_position)
            .map(|(f, q)| kl_divergence(f, q))
            .collect();
        let mean_kl = kls.iter().sum::<f64>() / kls.len() as f64;
        let same_top = float
            .per_position
            .iter()
            .zip(&int8.per_position)
            .filter(|(f, q)| top_byte(f) == top_byte(q))
            .count();
        println!(
            "{spec} group {group:?}: mean KL {mean_kl:.2e} nats, same top byte {same_top}/{}",
            kls.len()
        );
        assert!(
            mean_kl <= MAX_MEAN_KL,
            "{spec} group {group:?}: mean KL(float ‖ int8) = {mean_kl:.4} nats > {MAX_MEAN_KL}"
        );
        agree += same_top;
        positions += kls.len();
    }
    let share = agree as f64 / positions as f64;
    println!("group {group:?}: same top byte at {agree}/{positions} positions");
    assert!(
        share >= MIN_TOP_BYTE_AGREEMENT,
        "group {group:?}: same top byte at only {agree}/{positions} positions ({:.1}%)",
        100.0 * share
    );
}

fn check_sqnr(spec: &CheckpointSpec, report: &serde_json::Value) {
    let tensors = report["tensors"].as_array().expect("tensors list");
    let mut checked = 0;
    for tensor in tensors {
        let name = tensor["name"].as_str().expect("tensor name");
        if ![".expand", ".select", ".contract"]
            .iter()
            .any(|s| name.ends_with(s))
        {
            continue;
        }
        let sqnr = tensor["sqnr_db"]
            .as_f64()
            .unwrap_or_else(|| panic!("{spec}: {name} has no numeric sqnr_db in {tensor}"));
        assert!(
            (sqnr - UNIFORM_INT8_SQNR_DB).abs() <= SQNR_TOLERANCE_DB,
            "{spec}: {name} SQNR {sqnr:.1} dB, expected {UNIFORM_INT8_SQNR_DB:.1} \
             ± {SQNR_TOLERANCE_DB} dB"
        );
        checked += 1;
    }
    assert_eq!(
        checked,
        3 * spec.blocks,
        "{spec}: the convert report lacks some expand/select/contract tensors"
    );
}

#[test]
fn int8_per_row_tracks_float() {
    check_int8_against_float(None);
}

#[test]
fn int8_groups_of_32_track_float() {
    check_int8_against_float(Some(32));
}

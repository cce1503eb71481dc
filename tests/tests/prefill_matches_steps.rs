//! Prefill in passes of any size gives, bit for bit, the state and logits of stepping byte by
//! byte: on the demo model (three blocks, so the skipped work of the last block is exercised),
//! from a fresh state and from one with text already in it, with text lengths on both sides
//! of the pass size. This is the contract `prefill` documents; the reference is the engine's
//! own single step, which the other tests check against numpy and the float engine.

use std::path::PathBuf;

use inkling_core::engine::recurrence::{prefill, step};
use inkling_core::{Model, Scratch};

/// Pass sizes: one byte, the two-vector kernel's pair with and without a leftover, the
/// firmware's 4 and the host benchmark's 16.
const CHUNKS: [usize; 6] = [1, 2, 3, 4, 7, 16];
/// Text lengths: none, one, shorter than a pass, a whole pass, a pass and one, several.
const LENGTHS: [usize; 6] = [0, 1, 5, 16, 17, 41];
/// Text fed before the prefill in the second case.
const EARLIER: &[u8] = b"the panel";

fn bits(v: &[f32]) -> Vec<u32> {
    v.iter().map(|x| x.to_bits()).collect()
}

#[test]
fn prefill_equals_stepping_on_the_demo_model() {
    let path = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../models/demo.inkl");
    let bytes = std::fs::read(&path).expect("the demo image");
    let model = Model::from_bytes(&bytes).expect("the demo image loads");
    let d = *model.dims();
    assert!(
        d.blocks > 1,
        "the test needs a model with more than one block"
    );
    let text: Vec<u8> = b"a small model runs here in fixed memory; it never grows.".to_vec();

    let (mut work1, mut act1) = (vec![0.0; d.work_len()], vec![0; d.act_len()]);
    let mut single = Scratch::new(&d, &mut work1, &mut act1).unwrap();
    for earlier in [&b""[..], EARLIER] {
        for &len in &LENGTHS {
            let mut stepped = vec![0.0; d.state_len()];
            for &b in earlier.iter().chain(&text[..len]) {
                step(&model, &mut stepped, &mut single, b).unwrap();
            }
            let want = bits(single.logits());
            for &chunk in &CHUNKS {
                let (mut work, mut act) = (
                    vec![0.0; d.chunk_work_len(chunk)],
                    vec![0; d.chunk_act_len(chunk)],
                );
                let mut chunked = Scratch::new(&d, &mut work, &mut act).unwrap();
                let mut state = vec![0.0; d.state_len()];
                for &b in earlier {
                    step(&model, &mut state, &mut chunked, b).unwrap();
                }
                let logits = prefill(&model, &mut state, &mut chunked, &text[..len]).unwrap();
                let case = format!(
                    "{} earlier bytes, {len} bytes, passes of {chunk}",
                    earlier.len()
                );
                if len > 0 || !earlier.is_empty() {
                    assert_eq!(bits(logits), want, "logits: {case}");
                }
                assert_eq!(bits(&state), bits(&stepped), "state: {case}");
            }
        }
    }
}

//! Chunked prefill gives bit for bit what stepping byte by byte gives.

use inkling_core::engine::recurrence::{prefill, step};
use inkling_core::image::example::tiny_image;
use inkling_core::{Model, Scratch};
use proptest::prelude::*;

proptest! {
    #![proptest_config(ProptestConfig::with_cases(200))]

    #[test]
    fn prefill_equals_single_steps(text in proptest::collection::vec(any::<u8>(), 0..100), chunk in 1usize..40) {
        let image = tiny_image();
        let model = Model::from_bytes(&image).unwrap();
        let d = *model.dims();

        let (mut work, mut act) = (vec![0.0; d.chunk_work_len(chunk)], vec![0; d.chunk_act_len(chunk)]);
        let mut chunked = Scratch::new(&d, &mut work, &mut act).unwrap();
        prop_assert_eq!(chunked.chunk_capacity(), chunk.min(inkling_core::engine::buffers::MAX_CHUNK));
        let mut a = vec![0.0; d.state_len()];
        let fast = prefill(&model, &mut a, &mut chunked, &text).unwrap().to_vec();

        let (mut work1, mut act1) = (vec![0.0; d.work_len()], vec![0; d.act_len()]);
        let mut single = Scratch::new(&d, &mut work1, &mut act1).unwrap();
        let mut b = vec![0.0; d.state_len()];
        for &byte in &text {
            step(&model, &mut b, &mut single, byte).unwrap();
        }
        let bits = |v: &[f32]| v.iter().map(|x| x.to_bits()).collect::<Vec<_>>();
        prop_assert_eq!(bits(&a), bits(&b));
        prop_assert_eq!(bits(&fast), bits(single.logits()));
    }
}

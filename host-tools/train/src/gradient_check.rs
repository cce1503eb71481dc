//! Analytic gradients against central finite differences,
//! (L(p + h) - L(p - h)) / 2h, whose error is O(h²) (the standard numerical
//! differentiation formula, e.g. Nocedal & Wright, Numerical Optimization, §8.1).
//! Done in f64 so that rounding (≈ 1e-16·L/h) stays far below the tolerance.

use rand::{Rng, SeedableRng};

use inkling_core::Dims;

use crate::forward_backward::{backward, forward, Workspace};
use crate::model_params::{init_params, Layout};
use crate::shapes::shape;

fn check(dims: Dims, seed: u64) {
    let lay = Layout::new(dims);
    let mut rng = rand::rngs::StdRng::seed_from_u64(seed);
    let mut p: Vec<f64> = init_params(&lay, &mut rng);
    // Move every parameter off its structured initial value (norms = 1, skip = 1,
    // tiny embeddings) so that no gradient term is hidden by a special point.
    for v in p.iter_mut() {
        *v += rng.random_range(-0.3..0.3);
    }
    let bytes: Vec<u8> = (0..10).map(|_| rng.random_range(0..256u32) as u8).collect();
    let mut ws = Workspace::new(dims, bytes.len() - 1);
    forward(&p, &lay, &mut ws, &bytes);
    let mut g = vec![0.0; lay.len];
    backward(&p, &lay, &mut ws, &bytes, 1.0, &mut g);
    let h = 1e-5;
    for slot in &lay.slots {
        for _ in 0..6 {
            let idx = rng.random_range(slot.range.clone());
            let keep = p[idx];
            p[idx] = keep + h;
            let up = forward(&p, &lay, &mut ws, &bytes);
            p[idx] = keep - h;
            let down = forward(&p, &lay, &mut ws, &bytes);
            p[idx] = keep;
            let numeric = (up - down) / (2.0 * h);
            let analytic = g[idx];
            let err = (numeric - analytic).abs();
            assert!(
                err <= 1e-6 * (numeric.abs() + analytic.abs()) + 1e-8,
                "{} [{}]: analytic {analytic:e}, central difference {numeric:e}",
                slot.name,
                idx - slot.range.start
            );
        }
    }
}

fn dims(tied: bool) -> Dims {
    Dims {
        tied_head: tied,
        ..shape(2, 6, 8, 3, 3, 2)
    }
}

#[test]
fn every_tensor_matches_central_differences_tied_head() {
    check(dims(true), 7);
}

#[test]
fn every_tensor_matches_central_differences_untied_head() {
    check(dims(false), 11);
}

//! Engine benchmarks on the trainer's three preset shapes: the int8 matrix-vector kernel,
//! one step, a 16-byte prefill and a keystroke with 3 suggestions, each beside the plain f32
//! engine of the same model in the same run.
//!
//! Run with `cargo bench -p inkling-tests`. Before criterion's own report, a short summary
//! prints the int8/f32 ratios measured in this run.

use std::hint::black_box;
use std::time::Instant;

use criterion::{criterion_group, criterion_main, Criterion};
use inkling_core::engine::activation::quantise;
use inkling_core::engine::matvec::matvec;
use inkling_core::engine::recurrence::{prefill, step};
use inkling_core::engine::weights::Weights;
use inkling_core::image::format::Role;
use inkling_core::session::{SearchOptions, Session};
use inkling_core::{Model, Scratch};
use inkling_host::commands::train::Preset;
use inkling_tests::bench_models::preset_model;

const TEXT: &[u8] = b"the quick brown fox jumps over the lazy dog; ";
const PRESETS: [Preset; 3] = [Preset::Tiny, Preset::Small, Preset::Medium];

/// Buffers for stepping one model, with room for `chunk`-byte prefills.
struct Buffers {
    state: Vec<f32>,
    work: Vec<f32>,
    act: Vec<i16>,
}

impl Buffers {
    fn new(w: &dyn Weights, chunk: usize) -> Self {
        let d = w.dims();
        Buffers {
            state: vec![0.0; d.state_len()],
            work: vec![0.0; d.chunk_work_len(chunk)],
            act: vec![0; d.chunk_act_len(chunk)],
        }
    }

    fn steps(&mut self, w: &dyn Weights, bytes: &[u8]) {
        let d = *w.dims();
        let mut scratch = Scratch::new(&d, &mut self.work, &mut self.act).unwrap();
        for &b in bytes {
            black_box(step(w, &mut self.state, &mut scratch, b).unwrap());
        }
    }

    fn prefill(&mut self, w: &dyn Weights, bytes: &[u8]) {
        let d = *w.dims();
        let mut scratch = Scratch::new(&d, &mut self.work, &mut self.act).unwrap();
        black_box(prefill(w, &mut self.state, &mut scratch, bytes).unwrap());
    }
}

/// Seconds per call of `f`, the median of 5 timings of `reps` calls.
fn seconds_per_call(reps: usize, mut f: impl FnMut()) -> f64 {
    let mut t: Vec<f64> = (0..5)
        .map(|_| {
            let start = Instant::now();
            for _ in 0..reps {
                f();
            }
            start.elapsed().as_secs_f64() / reps as f64
        })
        .collect();
    t.sort_by(f64::total_cmp);
    t[2]
}

fn summary() {
    let dir = tempfile::tempdir().unwrap();
    println!("int8 engine against the plain f32 engine of the same model (this run):");
    println!(
        "{:<8} {:>12} {:>12} {:>8} {:>14}",
        "preset", "int8 step", "f32 step", "f32/int8", "prefill16/step"
    );
    for preset in PRESETS {
        let (float, image) = preset_model(preset, 1, dir.path());
        let model = Model::from_bytes(&image).unwrap();
        let mut q = Buffers::new(&model, 16);
        let mut f = Buffers::new(&float, 1);
        let int8 = seconds_per_call(20, || q.steps(&model, TEXT));
        let f32s = seconds_per_call(20, || f.steps(&float, TEXT));
        let chunked = seconds_per_call(20, || q.prefill(&model, &TEXT[..16]));
        let single = seconds_per_call(20, || q.steps(&model, &TEXT[..16]));
        println!(
            "{:<8} {:>10.1}µs {:>10.1}µs {:>7.2}× {:>13.2}",
            preset.name(),
            1e6 * int8 / TEXT.len() as f64,
            1e6 * f32s / TEXT.len() as f64,
            f32s / int8,
            chunked / single
        );
    }
}

fn benches(c: &mut Criterion) {
    summary();
    let dir = tempfile::tempdir().unwrap();
    for preset in PRESETS {
        let (float, image) = preset_model(preset, 1, dir.path());
        let model = Model::from_bytes(&image).unwrap();
        let name = preset.name();
        let d = *model.dims();

        let m = model.block_matrix(0, Role::Expand);
        let x: Vec<f32> = (0..d.d_model).map(|i| (i as f32 * 0.37).sin()).collect();
        let mut act = vec![0i16; d.d_model];
        let mut out = vec![0.0f32; 2 * d.d_inner];
        c.bench_function(&format!("matvec expand int8/{name}"), |b| {
            b.iter(|| {
                let s = quantise(black_box(&x), &mut act);
                matvec(&m, &act, s, &mut out);
            })
        });
        c.bench_function(&format!("matvec expand f32/{name}"), |b| {
            b.iter(|| float.matvec(0, Role::Expand, black_box(&x), &mut act, &mut out))
        });

        let mut q = Buffers::new(&model, 16);
        let mut f = Buffers::new(&float, 1);
        c.bench_function(&format!("step int8/{name}"), |b| {
            b.iter(|| q.steps(&model, b"e"))
        });
        c.bench_function(&format!("step f32/{name}"), |b| {
            b.iter(|| f.steps(&float, b"e"))
        });
        c.bench_function(&format!("prefill 16 bytes int8/{name}"), |b| {
            b.iter(|| q.prefill(&model, &TEXT[..16]))
        });
        c.bench_function(&format!("16 single steps int8/{name}"), |b| {
            b.iter(|| q.steps(&model, &TEXT[..16]))
        });

        let mut floats = vec![0.0f32; d.session_floats(3)];
        let (mut work, mut sact) = (vec![0.0; d.work_len()], vec![0; d.act_len()]);
        let scratch = Scratch::new(&d, &mut work, &mut sact).unwrap();
        let mut session = Session::<_, 3>::new(model, &mut floats, scratch).unwrap();
        session.push_bytes(b"the qu").unwrap();
        let options = SearchOptions::new(3);
        c.bench_function(&format!("keystroke with 3 suggestions int8/{name}"), |b| {
            b.iter(|| {
                session.push(b'i').unwrap();
                black_box(session.suggest(&options).unwrap());
                session.backspace().unwrap();
            })
        });
    }
}

criterion_group! {
    name = engine;
    config = Criterion::default().sample_size(10).measurement_time(std::time::Duration::from_secs(2));
    targets = benches
}
criterion_main!(engine);

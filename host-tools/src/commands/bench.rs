//! `inkling bench`: host speed of the int8 engine beside the float engine of the same model.

use std::path::PathBuf;
use std::time::Instant;

use inkling_core::engine::recurrence::prefill;
use inkling_core::engine::weights::Weights;
use inkling_core::Scratch;

use crate::error::HostError;
use crate::model_file::ModelFile;
use crate::text_scoring::HostEngine;

/// Bytes per prefill pass that `bench` measures.
const PREFILL_CHUNK: usize = 16;

/// Arguments of `inkling bench`.
#[derive(Debug, clap::Args)]
pub struct BenchArgs {
    /// The image.
    pub model: PathBuf,
    /// The float checkpoint of the same model, timed in the same run for a ratio.
    #[arg(long)]
    pub against: Option<PathBuf>,
    /// Bytes to step through per measurement.
    #[arg(long, default_value_t = 4000)]
    pub bytes: usize,
    /// Print one JSON object.
    #[arg(long)]
    pub json: bool,
}

/// `n` bytes of a fixed pseudo-text.
fn bench_text(n: usize) -> Vec<u8> {
    b"the quick brown fox jumps over the lazy dog; "
        .iter()
        .cycle()
        .take(n)
        .copied()
        .collect()
}

/// Steps per second of `weights` over `n` bytes of a fixed pseudo-text (median of 3 runs).
fn steps_per_second(weights: &dyn Weights, n: usize) -> f64 {
    let text = bench_text(n);
    let mut rates: Vec<f64> = (0..3)
        .map(|_| {
            let mut engine = HostEngine::new(weights);
            let start = Instant::now();
            let mut sink = 0.0f32;
            for &b in &text {
                sink += engine.step(weights, b)[0];
            }
            std::hint::black_box(sink);
            n as f64 / start.elapsed().as_secs_f64()
        })
        .collect();
    rates.sort_by(f64::total_cmp);
    rates[1]
}

/// Bytes per second of chunked prefill in passes of `chunk` bytes (median of 3 runs).
fn prefill_bytes_per_second(weights: &dyn Weights, n: usize, chunk: usize) -> f64 {
    let d = *weights.dims();
    let text = bench_text(n);
    let mut rates: Vec<f64> = (0..3)
        .map(|_| {
            let mut state = vec![0.0; d.state_len()];
            let mut work = vec![0.0; d.chunk_work_len(chunk)];
            let mut act = vec![0; d.chunk_act_len(chunk)];
            let start = Instant::now();
            if let Ok(mut scratch) = Scratch::new(&d, &mut work, &mut act) {
                let _ = std::hint::black_box(prefill(weights, &mut state, &mut scratch, &text));
            }
            n as f64 / start.elapsed().as_secs_f64()
        })
        .collect();
    rates.sort_by(f64::total_cmp);
    rates[1]
}

/// Runs `inkling bench`.
pub fn run(args: &BenchArgs) -> Result<(), HostError> {
    let model = ModelFile::open(&args.model)?;
    let rate = model.with_weights(|w| steps_per_second(w, args.bytes));
    let prefill_rate =
        model.with_weights(|w| prefill_bytes_per_second(w, args.bytes, PREFILL_CHUNK));
    let other = match &args.against {
        Some(p) => {
            let f = ModelFile::open(p)?;
            Some((
                f.engine_name(),
                f.with_weights(|w| steps_per_second(w, args.bytes)),
            ))
        }
        None => None,
    };
    if args.json {
        let mut v = serde_json::json!({
            "model": args.model, "engine": model.engine_name(),
            "step_bytes_per_second": rate, "step_microseconds": 1e6 / rate,
            "prefill_chunk": PREFILL_CHUNK, "prefill_bytes_per_second": prefill_rate,
            "prefill_cost_per_byte_vs_step": rate / prefill_rate,
        });
        if let Some((engine, r)) = other {
            v["against"] = serde_json::json!({"engine": engine, "step_bytes_per_second": r});
            v["speedup"] = serde_json::json!(rate / r);
        }
        println!("{v}");
    } else {
        println!(
            "{} engine: {:.0} bytes/s ({:.1} µs per step)",
            model.engine_name(),
            rate,
            1e6 / rate
        );
        if let Some((engine, r)) = other {
            println!("{engine} engine: {r:.0} bytes/s; ratio {:.2}×", rate / r);
        }
    }
    Ok(())
}

//! `inkling bench`: host speed of the int8 engine beside the float engine of the same model.

use std::collections::HashMap;
use std::path::{Path, PathBuf};
use std::time::Instant;

use inkling_core::engine::recurrence::prefill;
use inkling_core::engine::weights::Weights;
use inkling_core::session::SearchOptions;
use inkling_core::Scratch;

use super::suggest::MAX_COUNT;
use crate::error::HostError;
use crate::keystroke_savings::session_memory::SessionMemory;
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
    /// Suggestions per keystroke for the keystroke latency.
    #[arg(long, default_value_t = 3)]
    pub count: usize,
    /// The firmware's figures (`figures.txt` written by `tests/firmware/run.sh --out DIR`):
    /// its instruction counts are printed beside the host times.
    #[arg(long)]
    pub firmware_figures: Option<PathBuf>,
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

/// Keystrokes timed for the latency figure: a scenario message typed key by key.
const KEYSTROKE_TEXT: &[u8] = b"Supplies reached the upper hut before the rain. ";

/// Mean seconds per keystroke (push, then `count` suggestions), median of 3 runs over
/// [`KEYSTROKE_TEXT`].
fn keystroke_seconds(weights: &dyn Weights, count: usize) -> Result<f64, HostError> {
    let d = *weights.dims();
    let options = SearchOptions::new(count);
    let mut times = Vec::new();
    for _ in 0..3 {
        let mut memory = SessionMemory::new(&d, MAX_COUNT);
        let mut session = memory
            .session::<_, MAX_COUNT>(weights)
            .map_err(|e| HostError::Usage(format!("typing session: {e}")))?;
        let start = Instant::now();
        for &b in KEYSTROKE_TEXT {
            let _ = session.push(b);
            std::hint::black_box(
                session
                    .suggest(&options)
                    .map_err(|e| HostError::Usage(format!("suggest: {e}")))?,
            );
        }
        times.push(start.elapsed().as_secs_f64() / KEYSTROKE_TEXT.len() as f64);
    }
    times.sort_by(f64::total_cmp);
    Ok(times[1])
}

/// `NAME VALUE` lines of the firmware's figures file.
fn read_figures(path: &Path) -> Result<HashMap<String, f64>, HostError> {
    let text = std::fs::read_to_string(path).map_err(HostError::io(path))?;
    Ok(text
        .lines()
        .filter_map(|l| {
            let (k, v) = l.split_once(' ')?;
            Some((k.to_string(), v.trim().parse().ok()?))
        })
        .collect())
}

/// Runs `inkling bench`.
pub fn run(args: &BenchArgs) -> Result<(), HostError> {
    let model = ModelFile::open(&args.model)?;
    let rate = model.with_weights(|w| steps_per_second(w, args.bytes));
    let prefill_rate =
        model.with_weights(|w| prefill_bytes_per_second(w, args.bytes, PREFILL_CHUNK));
    if args.count == 0 || args.count > MAX_COUNT {
        return Err(HostError::Usage(format!(
            "--count must be 1 to {MAX_COUNT}"
        )));
    }
    let keystroke = model.with_weights(|w| keystroke_seconds(w, args.count))?;
    let figures = match &args.firmware_figures {
        Some(p) => Some(read_figures(p)?),
        None => None,
    };
    let figure = |name: &str| figures.as_ref().and_then(|f| f.get(name).copied());
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
            "keystroke_count": args.count, "keystroke_milliseconds": 1e3 * keystroke,
        });
        if figures.is_some() {
            v["firmware"] = serde_json::json!({
                "step_instructions": figure("step_instructions"),
                "keystroke_instructions_mean": figure("keystroke_instructions_mean"),
                "prefill_instructions_per_byte": figure("prefill_instructions_per_byte"),
            });
        }
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
        println!(
            "prefill in passes of {PREFILL_CHUNK} bytes: {prefill_rate:.0} bytes/s ({:.2}× the cost per byte of single steps)",
            rate / prefill_rate
        );
        println!(
            "keystroke with {} suggestions: {:.2} ms (mean over {} keys)",
            args.count,
            1e3 * keystroke,
            KEYSTROKE_TEXT.len()
        );
        if let Some(steps) = figure("step_instructions") {
            println!(
                "beside the firmware (instruction counts under QEMU, not cycles): a step is {steps:.0} instructions \
                 ({:.1} ms at 64 MHz, {:.1} ms at 168 MHz at one instruction per cycle) against {:.1} µs here",
                steps / 64e3,
                steps / 168e3,
                1e6 / rate
            );
        }
        if let Some(keys) = figure("keystroke_instructions_mean") {
            println!(
                "  a keystroke with 3 suggestions is {keys:.0} instructions ({:.0} ms at 64 MHz, {:.0} ms at 168 MHz) against {:.2} ms here",
                keys / 64e3,
                keys / 168e3,
                1e3 * keystroke
            );
        }
    }
    Ok(())
}

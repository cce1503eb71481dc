//! `inkling bench`: host speed of the int8 engine beside the float engine of the same model.

use std::collections::HashMap;
use std::path::{Path, PathBuf};
use std::time::Instant;

use inkling_core::engine::recurrence::{prefill, prefill_checked, step};
use inkling_core::engine::weights::Weights;
use inkling_core::session::draft::in_top_k;
use inkling_core::session::{SearchOptions, DEFAULT_HISTORY};
use inkling_core::user_memory::cache_blend::DEFAULT_DRAFT_TOP_K;
use inkling_core::Scratch;

use super::suggest::MAX_COUNT;
use crate::error::HostError;
use crate::keystroke_savings::session_memory::session_memory;
use crate::model_file::ModelFile;
use crate::text_scoring::HostEngine;

/// Bytes per prefill pass that `bench` measures.
const PREFILL_CHUNK: usize = 16;

/// Runs of each measurement; their minimum, median and maximum are printed, since one run
/// on a shared machine can be far off the next.
const REPEATS: usize = 5;

/// The minimum, median and maximum of the runs of one measurement.
#[derive(Debug, Clone, Copy, serde::Serialize)]
struct Spread {
    min: f64,
    median: f64,
    max: f64,
}

impl Spread {
    /// The spread of `samples` (at least one).
    fn of(mut samples: Vec<f64>) -> Spread {
        samples.sort_by(f64::total_cmp);
        let at = |i: usize| samples.get(i).copied().unwrap_or(f64::NAN);
        Spread {
            min: at(0),
            median: at(samples.len() / 2),
            max: at(samples.len().saturating_sub(1)),
        }
    }

    /// `median (min to max over N runs)`, with `digits` decimals.
    fn show(&self, digits: usize) -> String {
        format!(
            "{:.digits$} (min {:.digits$}, max {:.digits$} over {REPEATS} runs)",
            self.median, self.min, self.max
        )
    }
}

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

/// Microseconds per step of `weights` over `n` bytes of a fixed pseudo-text, per run.
fn step_microseconds(weights: &dyn Weights, n: usize) -> Spread {
    let text = bench_text(n);
    let times: Vec<f64> = (0..REPEATS)
        .map(|_| {
            let mut engine = HostEngine::new(weights);
            let start = Instant::now();
            let mut sink = 0.0f32;
            for &b in &text {
                sink += engine.step(weights, b)[0];
            }
            std::hint::black_box(sink);
            1e6 * start.elapsed().as_secs_f64() / n as f64
        })
        .collect();
    Spread::of(times)
}

/// Microseconds per byte of chunked prefill in passes of `chunk` bytes, per run.
fn prefill_microseconds(weights: &dyn Weights, n: usize, chunk: usize) -> Spread {
    let d = *weights.dims();
    let text = bench_text(n);
    let times: Vec<f64> = (0..REPEATS)
        .map(|_| {
            let mut state = vec![0.0; d.state_len()];
            let mut work = vec![0.0; d.chunk_work_len(chunk)];
            let mut act = vec![0; d.chunk_act_len(chunk)];
            let start = Instant::now();
            if let Ok(mut scratch) = Scratch::new(&d, &mut work, &mut act) {
                let _ = std::hint::black_box(prefill(weights, &mut state, &mut scratch, &text));
            }
            1e6 * start.elapsed().as_secs_f64() / n as f64
        })
        .collect();
    Spread::of(times)
}

/// Microseconds per drafted byte verified (its logits computed and the top-k rule applied
/// to the next drafted byte), per run: `chunked` in passes of `chunk` bytes through
/// `prefill_checked`, else one `step` per byte. Every byte is checked (none stops the pass).
fn verify_microseconds(weights: &dyn Weights, n: usize, chunk: usize, chunked: bool) -> Spread {
    let d = *weights.dims();
    let text = bench_text(n + 1);
    let times: Vec<f64> = (0..REPEATS)
        .map(|_| {
            let mut state = vec![0.0; d.state_len()];
            let mut work = vec![0.0; d.chunk_work_len(chunk)];
            let mut act = vec![0; d.chunk_act_len(chunk)];
            let mut accepted = 0usize;
            let mut check = |i: usize, logits: &[f32]| {
                accepted += usize::from(in_top_k(logits, text[i + 1], DEFAULT_DRAFT_TOP_K));
                true
            };
            let start = Instant::now();
            if chunked {
                if let Ok(mut scratch) = Scratch::new(&d, &mut work, &mut act) {
                    let _ =
                        prefill_checked(weights, &mut state[..], &mut scratch, &text[..n], check);
                }
            } else if let Ok(mut scratch) =
                Scratch::new(&d, &mut work[..d.work_len()], &mut act[..d.act_len()])
            {
                for (i, &b) in text[..n].iter().enumerate() {
                    if let Ok(logits) = step(weights, &mut state, &mut scratch, b) {
                        check(i, logits);
                    }
                }
            }
            std::hint::black_box(accepted);
            1e6 * start.elapsed().as_secs_f64() / n as f64
        })
        .collect();
    Spread::of(times)
}

/// Keystrokes timed for the latency figure: a scenario message typed key by key.
const KEYSTROKE_TEXT: &[u8] = b"Supplies reached the upper hut before the rain. ";

/// Mean milliseconds per keystroke (push, then `count` suggestions) over
/// [`KEYSTROKE_TEXT`], per run.
fn keystroke_milliseconds(weights: &dyn Weights, count: usize) -> Result<Spread, HostError> {
    let d = *weights.dims();
    let options = SearchOptions::new(count);
    let mut times = Vec::new();
    for _ in 0..REPEATS {
        let mut memory = session_memory(&d, MAX_COUNT);
        let mut session = memory
            .session::<_, MAX_COUNT, DEFAULT_HISTORY>(weights)
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
        times.push(1e3 * start.elapsed().as_secs_f64() / KEYSTROKE_TEXT.len() as f64);
    }
    Ok(Spread::of(times))
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
    // Everything that can be wrong with the arguments fails before the first timing.
    super::checks::count("--count", args.count)?;
    super::checks::at_least_one("--bytes", args.bytes)?;
    let model = ModelFile::open(&args.model)?;
    let against = args.against.as_deref().map(ModelFile::open).transpose()?;
    let figures = match &args.firmware_figures {
        Some(p) => Some(read_figures(p)?),
        None => None,
    };
    let step_us = model.with_weights(|w| step_microseconds(w, args.bytes));
    let prefill_us = model.with_weights(|w| prefill_microseconds(w, args.bytes, PREFILL_CHUNK));
    let keystroke_ms = model.with_weights(|w| keystroke_milliseconds(w, args.count))?;
    let verify_chunked_us =
        model.with_weights(|w| verify_microseconds(w, args.bytes, PREFILL_CHUNK, true));
    let verify_stepped_us =
        model.with_weights(|w| verify_microseconds(w, args.bytes, PREFILL_CHUNK, false));
    let verify_ratio = verify_chunked_us.median / verify_stepped_us.median;
    let (rate, prefill_rate) = (1e6 / step_us.median, 1e6 / prefill_us.median);
    let figure = |name: &str| figures.as_ref().and_then(|f| f.get(name).copied());
    let other = against.map(|f| {
        let us = f.with_weights(|w| step_microseconds(w, args.bytes));
        (f.engine_name(), 1e6 / us.median)
    });
    if args.json {
        let mut v = serde_json::json!({
            "model": args.model, "engine": model.engine_name(),
            "step_bytes_per_second": rate, "step_microseconds": 1e6 / rate,
            "prefill_chunk": PREFILL_CHUNK, "prefill_bytes_per_second": prefill_rate,
            "prefill_cost_per_byte_vs_step": rate / prefill_rate,
            "keystroke_count": args.count, "keystroke_milliseconds": keystroke_ms.median,
            "repeats": REPEATS,
            "step_microseconds_spread": step_us,
            "prefill_microseconds_per_byte_spread": prefill_us,
            "keystroke_milliseconds_spread": keystroke_ms,
            "draft_verify_microseconds_per_byte": verify_chunked_us.median,
            "draft_verify_stepped_microseconds_per_byte": verify_stepped_us.median,
            "draft_verify_cost_per_byte_vs_step": verify_ratio,
            "draft_verify_microseconds_per_byte_spread": verify_chunked_us,
            "draft_verify_stepped_microseconds_per_byte_spread": verify_stepped_us,
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
            "{} engine: {:.0} bytes/s; µs per step {}",
            model.engine_name(),
            rate,
            step_us.show(1)
        );
        if let Some((engine, r)) = other {
            println!("{engine} engine: {r:.0} bytes/s; ratio {:.2}×", rate / r);
        }
        println!(
            "prefill in passes of {PREFILL_CHUNK} bytes: {prefill_rate:.0} bytes/s ({:.2}× the cost per byte of single steps); µs per byte {}",
            rate / prefill_rate,
            prefill_us.show(2)
        );
        println!(
            "phrase draft verified in passes of {PREFILL_CHUNK} bytes, logits at every byte: \
             {:.2}× the cost per byte of stepping with logits; µs per byte {} (stepped {})",
            verify_ratio,
            verify_chunked_us.show(2),
            verify_stepped_us.show(2)
        );
        println!(
            "keystroke with {} suggestions (mean over {} keys): ms {}",
            args.count,
            KEYSTROKE_TEXT.len(),
            keystroke_ms.show(2)
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
                keystroke_ms.median
            );
        }
    }
    Ok(())
}

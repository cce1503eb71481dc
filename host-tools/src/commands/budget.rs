//! `inkling budget`: the model shapes that fit a part's flash and RAM, with the predicted
//! instructions per step and milliseconds per keystroke on a core (`--core`: Cortex-M4F by
//! default, Cortex-M0+ or RV32IMC).
//!
//! Flash is the exact image size plus the firmware's code (largest measured); RAM is the
//! typing session's buffers ([`Dims::session_bytes`]) plus the largest stack high-water mark
//! measured, plus a margin. Instructions come from [`CostModel`], fitted to the firmware's
//! counts under QEMU on that core; time assumes one instruction per cycle, an optimistic
//! bound (flash wait states and multi-cycle instructions make a real part slower).

use crate::cost_model::{calibration, image_bytes, Calibration, Core, CostModel};
use inkling_core::session::{SearchOptions, DEFAULT_HISTORY};
use inkling_core::Dims;

use crate::error::HostError;

/// Stack on top of the largest measured high-water mark (common practice, no source: keep
/// a margin for interrupt handlers and the application's own calls).
pub const STACK_MARGIN: usize = 2048;

/// Arguments of `inkling budget`.
#[derive(Debug, clap::Args)]
pub struct BudgetArgs {
    /// Flash of the part (bytes, or with K or M: 512K, 1M).
    #[arg(long, value_parser = parse_size)]
    pub flash: usize,
    /// RAM of the part (bytes, or with K or M).
    #[arg(long, value_parser = parse_size)]
    pub ram: usize,
    /// The core: its own cost model, fitted to its instruction counts under QEMU.
    #[arg(long, value_enum, default_value = "cortex-m4f")]
    pub core: Core,
    /// Core clock in MHz.
    #[arg(long, default_value_t = 64.0)]
    pub clock: f64,
    /// Suggestions per keystroke.
    #[arg(long, default_value_t = 3)]
    pub beams: usize,
    /// How many shapes to show.
    #[arg(long, default_value_t = 5)]
    pub top: usize,
    /// Only shapes whose largest keystroke (push and the whole search, predicted) takes at
    /// most this many milliseconds at --clock.
    #[arg(long)]
    pub max_ms: Option<f64>,
    /// Learned words of the user memory kept beside the model: its RAM and flash (4 KB
    /// sectors) are counted in (`inkling inspect --memory-words`).
    #[arg(long, default_value_t = 0, value_name = "WORDS")]
    pub memory_words: usize,
    /// Learned phrases of that user memory, counted in the same way.
    #[arg(long, default_value_t = 0, value_name = "PHRASES")]
    pub memory_phrases: usize,
    /// Print one JSON object.
    #[arg(long)]
    pub json: bool,
}

/// `512K`, `1M`, `4096` → bytes (K = 1024).
pub fn parse_size(text: &str) -> Result<usize, String> {
    let t = text.trim();
    let (digits, unit) = match t.char_indices().last() {
        Some((i, c)) if c.eq_ignore_ascii_case(&'k') => (&t[..i], 1024),
        Some((i, c)) if c.eq_ignore_ascii_case(&'m') => (&t[..i], 1024 * 1024),
        _ => (t, 1),
    };
    digits
        .parse::<usize>()
        .ok()
        .and_then(|n| n.checked_mul(unit))
        .ok_or_else(|| format!("{text:?} is not a size (bytes, or a number with K or M)"))
}

/// One shape that fits, with what it costs.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Candidate {
    /// The shape.
    pub dims: Dims,
    /// Flash: image and firmware code.
    pub flash_bytes: usize,
    /// The image alone.
    pub image_bytes: usize,
    /// RAM: session buffers and stack.
    pub ram_bytes: usize,
    /// Predicted instructions per step.
    pub step_instructions: f64,
    /// Predicted instructions per keystroke, mean.
    pub keystroke_instructions: f64,
    /// Predicted instructions of the largest keystroke.
    pub keystroke_max_instructions: f64,
}

/// The shapes of the enumeration: blocks 1..=6, d_model 32..=256 in steps of 16, d_inner
/// 1×, 1.5× or 2× d_model (multiples of 16), d_state 4, 8 or 16; K 4, R = ceil(D/16).
pub fn shapes() -> impl Iterator<Item = Dims> {
    (1..=6).flat_map(|blocks| {
        (32..=256).step_by(16).flat_map(move |d| {
            [d, d * 3 / 2, 2 * d]
                .into_iter()
                .filter(|i| i % 16 == 0)
                .flat_map(move |i| [4, 8, 16].map(|n| calibration::shape(d, i, n, blocks)))
        })
    })
}

/// Every shape that fits `flash` and `ram`, largest model (most MACs per step) first.
pub fn fitting(model: &CostModel, flash: usize, ram: usize, beams: usize) -> Vec<Candidate> {
    let max_steps = SearchOptions::new(beams).max_steps;
    let mut out: Vec<Candidate> = shapes()
        .map(|dims| {
            let image = image_bytes(&dims, false);
            Candidate {
                dims,
                flash_bytes: image + model.code_bytes,
                image_bytes: image,
                ram_bytes: dims.session_bytes(beams, DEFAULT_HISTORY)
                    + model.stack_bytes
                    + STACK_MARGIN,
                step_instructions: model.step_instructions(&dims),
                keystroke_instructions: model.keystroke_instructions(&dims, beams, max_steps),
                keystroke_max_instructions: model
                    .keystroke_max_instructions(&dims, beams, max_steps),
            }
        })
        .filter(|c| c.flash_bytes <= flash && c.ram_bytes <= ram)
        .collect();
    out.sort_by(|a, b| {
        b.dims.macs_per_step().cmp(&a.dims.macs_per_step()).then(
            a.keystroke_instructions
                .total_cmp(&b.keystroke_instructions),
        )
    });
    out
}

/// What to change when no shape fits: the smallest shape's flash and RAM against the part's.
fn nothing_fits_hint(model: &CostModel, flash: usize, ram: usize, beams: usize) -> String {
    let everything = fitting(model, usize::MAX, usize::MAX, beams);
    let need_flash = everything.iter().map(|c| c.flash_bytes).min().unwrap_or(0);
    let need_ram = everything.iter().map(|c| c.ram_bytes).min().unwrap_or(0);
    let mut short = Vec::new();
    if flash < need_flash {
        short.push(format!("flash (the smallest shape needs {need_flash} B)"));
    }
    if ram < need_ram {
        short.push(format!(
            "RAM (the smallest shape needs {need_ram} B with {beams} suggestions)"
        ));
    }
    if short.is_empty() {
        // Each limit alone admits some shape, but no shape meets both.
        short.push(format!(
            "flash and RAM together (the smallest shapes need {need_flash} B flash, {need_ram} B RAM)"
        ));
    }
    format!(
        "nothing fits: too little {}. Give a larger --flash or --ram, or fewer --beams.",
        short.join(" and ")
    )
}

/// The `inkling train` option that builds a model of `dims`.
pub fn train_option(dims: &Dims) -> String {
    format!(
        "--shape blocks={},d={},i={},n={},k={},r={}",
        dims.blocks, dims.d_model, dims.d_inner, dims.d_state, dims.d_conv, dims.dt_rank
    )
}

/// Milliseconds of `instructions` at `clock_mhz`, one instruction per cycle.
pub fn milliseconds(instructions: f64, clock_mhz: f64) -> f64 {
    instructions / (clock_mhz * 1e3)
}

/// Keeps the candidates whose largest keystroke takes at most `max_ms` at `clock_mhz`.
pub fn within_latency(found: &mut Vec<Candidate>, clock_mhz: f64, max_ms: f64) {
    found.retain(|c| milliseconds(c.keystroke_max_instructions, clock_mhz) <= max_ms);
}

/// Runs `inkling budget`.
pub fn run(args: &BudgetArgs) -> Result<(), HostError> {
    super::checks::positive("--clock", args.clock)?;
    super::checks::count("--beams", args.beams)?;
    super::checks::at_least_one("--top", args.top)?;
    let core = args.core.name();
    let cal = Calibration::parse(args.core.measurements())
        .map_err(|e| HostError::Usage(format!("built-in {core} measurements: {e}")))?;
    let model = CostModel::fit(&cal).ok_or_else(|| {
        HostError::Usage(format!(
            "built-in {core} measurements: too few shapes to fit"
        ))
    })?;
    let ms = |instructions: f64| milliseconds(instructions, args.clock);
    let with_memory = args.memory_words > 0 || args.memory_phrases > 0;
    let (memory_ram, memory_flash) = if with_memory {
        super::inspect::user_memory_bytes(args.memory_words, args.memory_phrases)
    } else {
        (0, 0)
    };
    let mut found = fitting(
        &model,
        args.flash.saturating_sub(memory_flash),
        args.ram.saturating_sub(memory_ram),
        args.beams,
    );
    for c in &mut found {
        c.flash_bytes += memory_flash;
        c.ram_bytes += memory_ram;
    }
    if let Some(limit) = args.max_ms {
        within_latency(&mut found, args.clock, limit);
    }
    let shown: Vec<&Candidate> = found.iter().take(args.top).collect();
    if args.json {
        let list: Vec<_> = shown
            .iter()
            .map(|c| {
                serde_json::json!({
                    "d_model": c.dims.d_model, "d_inner": c.dims.d_inner,
                    "d_state": c.dims.d_state, "d_conv": c.dims.d_conv,
                    "dt_rank": c.dims.dt_rank, "blocks": c.dims.blocks,
                    "macs_per_step": c.dims.macs_per_step(),
                    "image_bytes": c.image_bytes, "flash_bytes": c.flash_bytes,
                    "ram_bytes": c.ram_bytes,
                    "step_instructions": c.step_instructions.round(),
                    "keystroke_instructions": c.keystroke_instructions.round(),
                    "keystroke_ms": ms(c.keystroke_instructions),
                    "keystroke_max_instructions": c.keystroke_max_instructions.round(),
                    "keystroke_max_ms": ms(c.keystroke_max_instructions),
                    "bytes_per_second": args.clock * 1e6 / c.step_instructions,
                    "train_option": train_option(&c.dims),
                })
            })
            .collect();
        let mut v = serde_json::json!({
            "core": core, "flash_bytes": args.flash, "ram_bytes": args.ram, "clock_mhz": args.clock,
            "beams": args.beams, "max_ms": args.max_ms, "fitting": found.len(), "shapes": list,
            "assumptions": {
                "code_bytes": model.code_bytes,
                "stack_bytes": model.stack_bytes + STACK_MARGIN,
                "steps_per_keystroke": model.steps_per_keystroke(args.beams, SearchOptions::new(args.beams).max_steps),
                "keystroke_max_to_mean": model.max_to_mean,
                "instructions_per_cycle": 1.0,
                "memory_words": args.memory_words,
                "memory_phrases": args.memory_phrases,
                "memory_ram_bytes": memory_ram,
                "memory_flash_bytes": memory_flash,
            },
        });
        if found.is_empty() {
            v["hint"] =
                serde_json::json!(nothing_fits_hint(&model, args.flash, args.ram, args.beams));
        }
        println!("{v}");
        return Ok(());
    }
    let within = args
        .max_ms
        .map(|limit| format!(" with keystrokes of at most {limit} ms"))
        .unwrap_or_default();
    let memory = if with_memory {
        format!(
            "; a user memory of {} words and {} phrases takes {memory_ram} B RAM and {memory_flash} B flash",
            args.memory_words, args.memory_phrases
        )
    } else {
        String::new()
    };
    println!(
        "{} of {} shapes fit {} B flash and {} B RAM{within} on a {core} ({} suggestions, {} MHz; code {} B, stack {} B assumed{memory}; \
         time at one instruction per cycle, an optimistic bound):",
        found.len(),
        shapes().count(),
        args.flash,
        args.ram,
        args.beams,
        args.clock,
        model.code_bytes,
        model.stack_bytes + STACK_MARGIN
    );
    if found.is_empty() {
        println!(
            "{}",
            nothing_fits_hint(&model, args.flash, args.ram, args.beams)
        );
        return Ok(());
    }
    println!("blocks d_model d_inner d_state   MACs/step  flash B    RAM B  instr/step  ms/key mean  ms/key max  bytes/s  inkling train ...");
    for c in shown {
        println!(
            "{:>6} {:>7} {:>7} {:>7} {:>11} {:>8} {:>8} {:>11.0} {:>12.1} {:>11.1} {:>8.0}  {}",
            c.dims.blocks,
            c.dims.d_model,
            c.dims.d_inner,
            c.dims.d_state,
            c.dims.macs_per_step(),
            c.flash_bytes,
            c.ram_bytes,
            c.step_instructions,
            ms(c.keystroke_instructions),
            ms(c.keystroke_max_instructions),
            args.clock * 1e6 / c.step_instructions,
            train_option(&c.dims)
        );
    }
    Ok(())
}

//! The firmware's measured figures per model shape and core, as
//! `tests/firmware/calibrate.sh --core CORE` writes them: one shape a line of `NAME=VALUE`
//! fields, `#` comments.

use inkling_core::Dims;

/// A core the firmware was measured on (named as `tests/firmware/run.sh --core` names it).
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum Core {
    /// Cortex-M4F: FPU, DSP multiply-accumulate (`thumbv7em-none-eabihf`).
    #[value(name = "cortex-m4f")]
    CortexM4f,
    /// Cortex-M0+: no FPU (soft float), no DSP instructions (`thumbv6m-none-eabi`).
    #[value(name = "cortex-m0plus")]
    CortexM0plus,
    /// RISC-V RV32IMC: no FPU (soft float) (`riscv32imc-unknown-none-elf`).
    #[value(name = "riscv32imc")]
    Riscv32imc,
}

impl Core {
    /// Every core with built-in measurements.
    pub const ALL: [Core; 3] = [Core::CortexM4f, Core::CortexM0plus, Core::Riscv32imc];

    /// Its name, as `--core` takes it.
    pub fn name(self) -> &'static str {
        match self {
            Core::CortexM4f => "cortex-m4f",
            Core::CortexM0plus => "cortex-m0plus",
            Core::Riscv32imc => "riscv32imc",
        }
    }

    /// The measurements of this core built into the tool.
    pub fn measurements(self) -> &'static str {
        match self {
            Core::CortexM4f => include_str!("../../../tests/firmware/calibration.txt"),
            Core::CortexM0plus => {
                include_str!("../../../tests/firmware/calibration-cortex-m0plus.txt")
            }
            Core::Riscv32imc => include_str!("../../../tests/firmware/calibration-riscv32imc.txt"),
        }
    }
}

/// Suggestions the firmware's typing run offers (`SUGGESTIONS` in its build script).
pub const FIRMWARE_BEAMS: usize = 3;

/// One measured shape.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Sample {
    /// Its dimensions (K 4, R = ceil(D/16), tied head, one scale per row).
    pub dims: Dims,
    /// Instructions of one engine step.
    pub step_instructions: u64,
    /// Instructions of one keystroke (the edit and the whole search), mean.
    pub keystroke_instructions_mean: u64,
    /// Instructions of one keystroke (the edit and the whole search), largest.
    pub keystroke_instructions_max: u64,
    /// Engine steps of the search per keystroke, mean.
    pub search_steps_mean: u64,
    /// Stack high-water mark, bytes.
    pub stack_used_bytes: usize,
    /// The image, bytes.
    pub image_bytes: usize,
    /// The firmware's text section (code, constants and the image), bytes.
    pub flash_text_bytes: usize,
    /// Whether the weights were trained (`trained=1`), not drawn at random: a trained
    /// model's search is far shorter.
    pub trained: bool,
}

/// All measured shapes.
#[derive(Debug, Clone, PartialEq)]
pub struct Calibration {
    /// The shapes, in file order.
    pub samples: Vec<Sample>,
    /// Suggestions per keystroke in the measured typing.
    pub beams: usize,
}

/// A line of the calibration text that does not read.
#[derive(Debug, thiserror::Error)]
#[error("calibration line {line}: {problem}")]
pub struct CalibrationError {
    /// 1-based line number.
    pub line: usize,
    /// What is wrong.
    pub problem: String,
}

/// The dimensions the calibration (and the budget's enumeration) uses for a shape.
pub fn shape(d_model: usize, d_inner: usize, d_state: usize, blocks: usize) -> Dims {
    Dims {
        d_model,
        d_inner,
        d_state,
        d_conv: 4,
        dt_rank: d_model.div_ceil(16),
        blocks,
        tied_head: true,
        norm_eps: 1e-5,
        group: 0,
    }
}

impl Calibration {
    /// Reads the text.
    pub fn parse(text: &str) -> Result<Calibration, CalibrationError> {
        let mut samples = Vec::new();
        for (i, raw) in text.lines().enumerate() {
            let line = raw.trim();
            if line.is_empty() || line.starts_with('#') {
                continue;
            }
            let bad = |problem: String| CalibrationError {
                line: i + 1,
                problem,
            };
            let field = |name: &str| -> Result<u64, CalibrationError> {
                line.split_whitespace()
                    .find_map(|f| f.strip_prefix(name).and_then(|r| r.strip_prefix('=')))
                    .ok_or_else(|| bad(format!("no field {name}")))?
                    .parse()
                    .map_err(|e| bad(format!("field {name}: {e}")))
            };
            let dims = shape(
                field("d_model")? as usize,
                field("d_inner")? as usize,
                field("d_state")? as usize,
                field("blocks")? as usize,
            );
            samples.push(Sample {
                dims,
                step_instructions: field("step_instructions")?,
                keystroke_instructions_mean: field("keystroke_total_instructions_mean")?,
                keystroke_instructions_max: field("keystroke_total_instructions_max")?,
                search_steps_mean: field("keystroke_search_steps_mean")?,
                stack_used_bytes: field("stack_used_bytes")? as usize,
                image_bytes: field("image_bytes")? as usize,
                flash_text_bytes: field("flash_text_bytes")? as usize,
                trained: field("trained").is_ok_and(|v| v == 1),
            });
        }
        Ok(Calibration {
            samples,
            beams: FIRMWARE_BEAMS,
        })
    }
}

//! `inkling inspect`: what an image holds and the flash and RAM it takes.

use std::path::PathBuf;

use crate::error::HostError;
use crate::file_kind::{check, Wanted};
use crate::model_file::image_model;

/// Arguments of `inkling inspect`.
#[derive(Debug, clap::Args)]
pub struct InspectArgs {
    /// The image.
    pub image: PathBuf,
    /// Also show the RAM of a typing session offering this many suggestions.
    #[arg(long)]
    pub beams: Option<usize>,
    /// Also show the RAM and flash of a user memory of this many learned words (flash in
    /// 4 KB sectors with 4-byte writes).
    #[arg(long, value_name = "WORDS")]
    pub memory_words: Option<usize>,
    /// With --memory-words: the user memory also keeps this many phrases.
    #[arg(
        long,
        default_value_t = 0,
        value_name = "PHRASES",
        requires = "memory_words"
    )]
    pub memory_phrases: usize,
    /// Print one JSON object.
    #[arg(long)]
    pub json: bool,
}

/// The RAM and flash of a user memory of `words` words and `phrases` phrases, in sectors of
/// [`SECTOR`](crate::memory_file::SECTOR) bytes with 4-byte writes.
pub fn user_memory_bytes(words: usize, phrases: usize) -> (usize, usize) {
    use inkling_core::user_memory::{
        flash_layout::flash_bytes_needed, learned_words::ram_bytes_for,
    };
    (
        ram_bytes_for(words, phrases),
        flash_bytes_needed(words, phrases, crate::memory_file::SECTOR, 4),
    )
}

/// Runs `inkling inspect`.
pub fn run(args: &InspectArgs) -> Result<(), HostError> {
    check(&args.image, Wanted::Image)?;
    if let Some(beams) = args.beams {
        super::checks::count("--beams", beams)?;
    }
    let bytes = std::fs::read(&args.image).map_err(HostError::io(&args.image))?;
    let model = image_model(&bytes, &args.image)?;
    let d = *model.dims();
    let tensors: Vec<_> = model
        .tensors()
        .map(|e| {
            serde_json::json!({
                "role": e.role.name(),
                "block": e.block,
                "element": format!("{:?}", e.element).to_lowercase(),
                "scale": e.scale.map(|s| format!("{s:?}").to_lowercase()),
                "rows": e.rows,
                "cols": e.cols,
                "offset": e.data_offset,
                "scales_offset": e.scales_offset,
            })
        })
        .collect();
    let session = args.beams.map(|k| crate::commands::session_ram(&d, k));
    let phrases = args.memory_phrases;
    let memory = args.memory_words.map(|words| {
        let (ram, flash) = user_memory_bytes(words, phrases);
        serde_json::json!({
            "words": words, "phrases": phrases, "ram_bytes": ram, "flash_bytes": flash,
            "sector_bytes": crate::memory_file::SECTOR,
        })
    });
    let (major, minor) = model.version();
    // Which checkpoint layout the converter read (image format 1.1); absent: the schema's own
    // names or a name map.
    let source_layout = model.source_layout().map(|l| l.name());
    let v = serde_json::json!({
        "image": args.image,
        "version": format!("{major}.{minor}"),
        "source_layout": source_layout,
        "crc32": format!("{:#010x}", model.checksum()),
        "dims": {
            "d_model": d.d_model, "d_inner": d.d_inner, "d_state": d.d_state,
            "d_conv": d.d_conv, "dt_rank": d.dt_rank, "blocks": d.blocks,
            "tied_head": d.tied_head, "norm_eps": d.norm_eps, "group": d.group,
        },
        "flash_bytes": model.flash_bytes(),
        "ram": {
            "state_bytes": d.state_bytes(),
            "scratch_bytes": d.scratch_bytes(),
            "engine_bytes": d.state_bytes() + d.scratch_bytes(),
            "session": session,
        },
        "macs_per_step": d.macs_per_step(),
        "user_memory": memory,
        "tensors": tensors,
    });
    if args.json {
        println!("{v}");
    } else {
        println!(
            "{}: image version {major}.{minor}, CRC-32 {:#010x}",
            args.image.display(),
            model.checksum()
        );
        println!(
            "converted from: {}",
            source_layout.map_or(
                "the checkpoint schema's names (or a name map)".into(),
                |l| { format!("the {l} checkpoint layout") }
            )
        );
        println!(
            "blocks {}, d_model {}, d_inner {}, d_state {}, d_conv {}, dt_rank {}, head {}, scales {}",
            d.blocks,
            d.d_model,
            d.d_inner,
            d.d_state,
            d.d_conv,
            d.dt_rank,
            if d.tied_head { "tied" } else { "untied" },
            if d.group == 0 { "per row".to_string() } else { format!("per {} columns", d.group) }
        );
        println!(
            "flash: {} bytes (the whole image, read in place)",
            model.flash_bytes()
        );
        println!(
            "RAM:   state {} bytes + scratch {} bytes = {} bytes for one engine",
            d.state_bytes(),
            d.scratch_bytes(),
            d.state_bytes() + d.scratch_bytes()
        );
        if let Some(s) = session {
            println!(
                "RAM:   typing session with {} suggestions: {s}",
                args.beams.unwrap_or(0)
            );
        }
        if let Some(words) = args.memory_words {
            let (ram, flash) = user_memory_bytes(words, phrases);
            println!(
                "user memory of {words} words and {phrases} phrases: RAM {ram} bytes, flash {flash} bytes ({} sectors of {} bytes)",
                flash / crate::memory_file::SECTOR,
                crate::memory_file::SECTOR
            );
        }
        println!("int8 multiply-accumulates per byte: {}", d.macs_per_step());
        println!(
            "{:<12} {:>5} {:>6} {:>6} {:>6} {:>8}",
            "tensor", "block", "type", "rows", "cols", "offset"
        );
        for e in model.tensors() {
            println!(
                "{:<12} {:>5} {:>6} {:>6} {:>6} {:>8}",
                e.role.name(),
                e.block,
                format!("{:?}", e.element).to_lowercase(),
                e.rows,
                e.cols,
                e.data_offset
            );
        }
    }
    Ok(())
}

//! `inkling convert`: checkpoint → packed int8 image, with the cost of the conversion.

use std::path::PathBuf;

use inkling_quantize::atomic_file::write_atomically;
use inkling_quantize::name_map::NameMap;
use inkling_quantize::{convert, Checkpoint, ConvertOptions};

use crate::error::HostError;
use crate::file_kind::{check, Wanted};

/// Arguments of `inkling convert`.
#[derive(Debug, clap::Args)]
pub struct ConvertArgs {
    /// The float checkpoint (safetensors; F32, F16 or BF16).
    pub checkpoint: PathBuf,
    /// The image to write (replaced atomically).
    #[arg(short, long)]
    pub out: PathBuf,
    /// A TOML name-mapping file for checkpoints whose tensor names differ from the schema.
    #[arg(long)]
    pub map: Option<PathBuf>,
    /// Columns per int8 scale (0: one scale per row). Grouped scales cost speed on the
    /// device: the Cortex-M4 kernel takes one scale per row, so every matrix with groups
    /// runs on the portable kernel, several times slower per step.
    #[arg(long, default_value_t = 0)]
    pub group: usize,
    /// Store norms, biases and other small float tensors as f16 (smaller image).
    #[arg(long)]
    pub f16_floats: bool,
    /// Print one JSON object.
    #[arg(long)]
    pub json: bool,
}

/// What `--group N` costs on the device, said in the report (none for one scale per row).
fn group_warning(group: usize) -> Option<String> {
    (group > 0).then(|| {
        format!(
            "--group {group}: grouped scales run on the portable kernel on a Cortex-M4 (its \
             fast kernel takes one scale per row), several times slower per step; \
             convert with --group 0 for speed"
        )
    })
}

/// Runs `inkling convert`.
pub fn run(args: &ConvertArgs) -> Result<(), HostError> {
    check(&args.checkpoint, Wanted::Checkpoint)?;
    let map = match &args.map {
        Some(p) => NameMap::load(p)?,
        None => NameMap::identity(),
    };
    let checkpoint = Checkpoint::load(&args.checkpoint, &map)?;
    let options = ConvertOptions {
        group: args.group,
        f16_floats: args.f16_floats,
    };
    let (image, report) = convert(&checkpoint, &options)?;
    write_atomically(&args.out, &image)?;
    if args.json {
        let v = serde_json::json!({
            "checkpoint": args.checkpoint,
            "image": args.out,
            "image_bytes": report.image_bytes,
            "parameters": report.parameters,
            "group": args.group,
            "warnings": group_warning(args.group).into_iter().collect::<Vec<_>>(),
            "tensors": report.tensors,
        });
        println!("{v}");
    } else {
        println!(
            "{} -> {}: {} parameters, {} bytes",
            args.checkpoint.display(),
            args.out.display(),
            report.parameters,
            report.image_bytes
        );
        println!(
            "{:<24} {:>6} {:>10} {:>12} {:>9}",
            "tensor", "as", "bytes", "max |error|", "SQNR dB"
        );
        for t in &report.tensors {
            let sqnr = t.sqnr_db.map_or("exact".to_string(), |s| format!("{s:.1}"));
            println!(
                "{:<24} {:>6} {:>10} {:>12.3e} {:>9}",
                t.name, t.stored_as, t.bytes, t.max_abs_error, sqnr
            );
        }
        if let Some(warning) = group_warning(args.group) {
            println!("note: {warning}");
        }
    }
    Ok(())
}

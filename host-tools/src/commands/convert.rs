//! `inkling convert`: checkpoint → packed int8 image, with the cost of the conversion; or, with
//! `--to`, the checkpoint in an outside layout.

use std::path::PathBuf;

use inkling_core::image::format::SourceLayout;
use inkling_quantize::atomic_file::write_atomically;
use inkling_quantize::export::export;
use inkling_quantize::name_map::NameMap;
use inkling_quantize::schema::SCHEMA_SPEC;
use inkling_quantize::{convert, Checkpoint, ConvertOptions, ReadOptions};

use crate::error::HostError;
use crate::file_kind::{check, Wanted};

/// What `inkling convert` writes.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum Output {
    /// The packed int8 image.
    Image,
    /// A checkpoint in the layout of the published reference code (F32).
    ReferenceCode,
    /// A checkpoint in the layout of the reference code's model-hub port (F32).
    ModelHub,
}

/// Arguments of `inkling convert`.
#[derive(Debug, clap::Args)]
pub struct ConvertArgs {
    /// The float checkpoint (safetensors; F32, F16 or BF16): the schema's names, or the layout
    /// of the published reference code or of its model-hub port, recognised by its names (all
    /// specified in quantize/src/schema.rs).
    pub checkpoint: PathBuf,
    /// The file to write (replaced atomically).
    #[arg(short, long)]
    pub out: PathBuf,
    /// What to write: the image, or the checkpoint in an outside layout.
    #[arg(long, value_enum, default_value_t = Output::Image)]
    pub to: Output,
    /// A TOML name-mapping file for checkpoints whose tensor names differ from the schema
    /// (`{block}` stands for every block number).
    #[arg(long)]
    pub map: Option<PathBuf>,
    /// Keep rows 0..256 of an embedding (and head) with more rows, dropping the rest.
    #[arg(long)]
    pub cut_rows: bool,
    /// The RMS norm's epsilon, overriding the checkpoint's `norm_eps` metadata (without either:
    /// 1e-5).
    #[arg(long)]
    pub norm_eps: Option<f32>,
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

/// The layout a checkpoint was read in, as reports name it.
fn layout_name(checkpoint: &Checkpoint, mapped: bool) -> &'static str {
    match (checkpoint.source, mapped) {
        (Some(layout), _) => layout.name(),
        (None, true) => "name-map",
        (None, false) => "schema",
    }
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
    if let Some(eps) = args.norm_eps.filter(|e| !(e.is_finite() && *e > 0.0)) {
        return Err(HostError::Usage(format!(
            "--norm-eps {eps}: the epsilon must be a positive number (see the {SCHEMA_SPEC})"
        )));
    }
    let options = ReadOptions {
        map: match &args.map {
            Some(p) => NameMap::load(p)?,
            None => NameMap::identity(),
        },
        cut_rows: args.cut_rows,
        norm_eps: args.norm_eps,
    };
    let checkpoint = Checkpoint::load(&args.checkpoint, &options)?;
    let layout = layout_name(&checkpoint, args.map.is_some());
    let adjustments: Vec<String> = checkpoint
        .adjustments
        .iter()
        .map(ToString::to_string)
        .collect();
    let target = match args.to {
        Output::Image => None,
        Output::ReferenceCode => Some(SourceLayout::ReferenceCode),
        Output::ModelHub => Some(SourceLayout::ModelHubPort),
    };
    if let Some(target) = target {
        if args.group != 0 || args.f16_floats {
            return Err(HostError::Usage(
                "--group and --f16-floats shape an image; --to writes a checkpoint".into(),
            ));
        }
        let bytes = export(&checkpoint, target)?;
        write_atomically(&args.out, &bytes)?;
        if args.json {
            let v = serde_json::json!({
                "checkpoint": args.checkpoint,
                "layout": layout,
                "adjustments": adjustments,
                "out": args.out,
                "out_layout": target.name(),
                "bytes": bytes.len(),
            });
            println!("{v}");
        } else {
            println!(
                "{} ({layout} layout) -> {} ({} layout, F32): {} bytes",
                args.checkpoint.display(),
                args.out.display(),
                target.name(),
                bytes.len()
            );
            for a in &adjustments {
                println!("  {a}");
            }
        }
        return Ok(());
    }
    let convert_options = ConvertOptions {
        group: args.group,
        f16_floats: args.f16_floats,
    };
    let (image, report) = convert(&checkpoint, &convert_options)?;
    write_atomically(&args.out, &image)?;
    if args.json {
        let v = serde_json::json!({
            "checkpoint": args.checkpoint,
            "layout": layout,
            "adjustments": adjustments,
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
        println!("layout: {layout} (recorded in the image when it is an outside layout)");
        for a in &adjustments {
            println!("  {a}");
        }
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

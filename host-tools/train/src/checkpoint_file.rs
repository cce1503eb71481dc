//! Checkpoints in the design's safetensors schema (F32), the optimizer state
//! beside them, both written atomically (temp file in the same folder, fsync,
//! rename over the target).

use std::collections::HashMap;
use std::path::{Path, PathBuf};

use safetensors::{Dtype, SafeTensors};

use inkling_core::image::format::{Role, VOCAB};
use inkling_core::Dims;
use inkling_quantize::checkpoint::DEFAULT_NORM_EPS;
use inkling_quantize::schema::schema_name;

use crate::adamw::{AdamW, AdamWSettings};
use crate::error::TrainError;
use crate::model_params::Layout;

/// A checkpoint read back: its dimensions, preset name, step and parameters.
pub struct Checkpoint {
    pub dims: Dims,
    pub config: String,
    pub step: u64,
    pub params: Vec<f32>,
}

/// `<checkpoint>.adamw.safetensors`: where the resume state of a checkpoint lives (the
/// latest parameters and the optimizer's moments).
pub fn optimizer_path(checkpoint: &Path) -> PathBuf {
    let mut s = checkpoint.as_os_str().to_owned();
    s.push(".adamw.safetensors");
    PathBuf::from(s)
}

/// Writes `bytes` to `path` so that `path` is always either the old or the new file.
pub fn write_atomically(path: &Path, bytes: &[u8]) -> Result<(), TrainError> {
    inkling_quantize::atomic_file::write_file_atomically(path, bytes).map_err(|source| {
        TrainError::WriteFile {
            path: path.to_owned(),
            source,
        }
    })
}

fn f32_bytes(v: &[f32]) -> Vec<u8> {
    v.iter().flat_map(|x| x.to_le_bytes()).collect()
}

fn encode(
    path: &Path,
    tensors: Vec<(String, Vec<usize>, Vec<u8>)>,
    meta: HashMap<String, String>,
) -> Result<Vec<u8>, TrainError> {
    let err = |source| TrainError::EncodeCheckpoint {
        path: path.to_owned(),
        source,
    };
    let views = tensors
        .iter()
        .map(|(name, shape, bytes)| {
            Ok((
                name.clone(),
                safetensors::tensor::TensorView::new(Dtype::F32, shape.clone(), bytes)
                    .map_err(err)?,
            ))
        })
        .collect::<Result<Vec<_>, TrainError>>()?;
    safetensors::serialize(views, Some(meta)).map_err(err)
}

/// The checkpoint: every tensor of `layout` under its schema name, plus
/// `__metadata__` (string values): norm_eps, config, step and the dimensions.
pub fn write_checkpoint(
    path: &Path,
    layout: &Layout,
    params: &[f32],
    config: &str,
    step: u64,
) -> Result<(), TrainError> {
    let d = layout.dims;
    let meta: HashMap<String, String> = [
        ("norm_eps", format!("{:e}", d.norm_eps)),
        ("config", config.to_string()),
        ("step", step.to_string()),
        ("blocks", d.blocks.to_string()),
        ("d_model", d.d_model.to_string()),
        ("d_inner", d.d_inner.to_string()),
        ("d_state", d.d_state.to_string()),
        ("d_conv", d.d_conv.to_string()),
        ("step_rank", d.dt_rank.to_string()),
        (
            "head",
            if d.tied_head { "tied" } else { "untied" }.to_string(),
        ),
    ]
    .into_iter()
    .map(|(k, v)| (k.to_string(), v))
    .collect();
    let tensors = layout
        .slots
        .iter()
        .map(|s| {
            (
                s.name.clone(),
                s.shape.clone(),
                f32_bytes(&params[s.range.clone()]),
            )
        })
        .collect();
    write_atomically(path, &encode(path, tensors, meta)?)
}

fn read(path: &Path) -> Result<Vec<u8>, TrainError> {
    std::fs::read(path).map_err(|source| TrainError::ReadFile {
        path: path.to_owned(),
        source,
    })
}

fn parse<'a>(
    path: &Path,
    bytes: &'a [u8],
) -> Result<(SafeTensors<'a>, HashMap<String, String>), TrainError> {
    let err = |source| TrainError::ParseCheckpoint {
        path: path.to_owned(),
        source,
    };
    let st = SafeTensors::deserialize(bytes).map_err(err)?;
    let (_, header) = SafeTensors::read_metadata(bytes).map_err(err)?;
    Ok((st, header.metadata().clone().unwrap_or_default()))
}

fn shape_of(path: &Path, st: &SafeTensors<'_>, name: &str) -> Result<Vec<usize>, TrainError> {
    st.tensor(name)
        .map(|t| t.shape().to_vec())
        .map_err(|_| TrainError::MissingTensor {
            path: path.to_owned(),
            name: name.to_string(),
        })
}

/// Reads an F32 tensor whose shape must be `shape`.
fn tensor_f32(
    path: &Path,
    st: &SafeTensors<'_>,
    name: &str,
    shape: &[usize],
) -> Result<Vec<f32>, TrainError> {
    let t = st.tensor(name).map_err(|_| TrainError::MissingTensor {
        path: path.to_owned(),
        name: name.to_string(),
    })?;
    if t.dtype() != Dtype::F32 {
        return Err(TrainError::TensorDtype {
            path: path.to_owned(),
            name: name.to_string(),
            found: t.dtype(),
        });
    }
    if t.shape() != shape {
        return Err(TrainError::TensorShape {
            path: path.to_owned(),
            name: name.to_string(),
            expected: shape.to_vec(),
            found: t.shape().to_vec(),
        });
    }
    Ok(t.data()
        .chunks_exact(4)
        .map(|c| f32::from_le_bytes([c[0], c[1], c[2], c[3]]))
        .collect())
}

fn meta_u64(
    path: &Path,
    meta: &HashMap<String, String>,
    key: &'static str,
) -> Result<u64, TrainError> {
    let bad = |reason: String| TrainError::Metadata {
        path: path.to_owned(),
        key,
        reason,
    };
    meta.get(key)
        .ok_or_else(|| bad("missing".into()))?
        .parse()
        .map_err(|e| bad(format!("not a whole number: {e}")))
}

/// Reads a checkpoint written by `write_checkpoint`; dimensions come from the tensor shapes.
pub fn read_checkpoint(path: &Path) -> Result<Checkpoint, TrainError> {
    let bytes = read(path)?;
    let (st, meta) = parse(path, &bytes)?;
    let name = |role: Role| schema_name(role, 0);
    let embed = shape_of(path, &st, &name(Role::ByteEmbed))?;
    let select = shape_of(path, &st, &name(Role::Select))?;
    let conv = shape_of(path, &st, &name(Role::Conv))?;
    let decay = shape_of(path, &st, &name(Role::Decay))?;
    let (Some(&d), Some(&i), Some(&k), Some(&n), Some(&sr)) = (
        embed.get(1),
        conv.first(),
        conv.get(1),
        decay.get(1),
        select.first(),
    ) else {
        return Err(TrainError::TensorShape {
            path: path.to_owned(),
            name: name(Role::ByteEmbed),
            expected: vec![VOCAB, 0],
            found: embed,
        });
    };
    let blocks = (0..)
        .take_while(|&l| st.tensor(&schema_name(Role::Norm, l)).is_ok())
        .count();
    let norm_eps = match meta.get("norm_eps") {
        None => DEFAULT_NORM_EPS,
        Some(v) => v.parse().map_err(|e| TrainError::Metadata {
            path: path.to_owned(),
            key: "norm_eps",
            reason: format!("not a number: {e}"),
        })?,
    };
    let dims = Dims {
        d_model: d,
        d_inner: i,
        d_state: n,
        d_conv: k,
        dt_rank: sr.saturating_sub(2 * n),
        blocks,
        tied_head: st.tensor(&name(Role::Head)).is_err(),
        norm_eps,
        group: 0,
    };
    let layout = Layout::new(dims);
    let mut params = vec![0.0f32; layout.len];
    for s in &layout.slots {
        params[s.range.clone()].copy_from_slice(&tensor_f32(path, &st, &s.name, &s.shape)?);
    }
    Ok(Checkpoint {
        dims,
        config: meta.get("config").cloned().unwrap_or_default(),
        step: meta_u64(path, &meta, "step")?,
        params,
    })
}

/// The resume state: the latest parameters `p.<tensor>` (the checkpoint itself keeps the
/// best held-out ones, which may be older), the optimizer's `m.<tensor>` and `v.<tensor>` per
/// parameter tensor, and metadata `step` (updates done) and `seconds` (training wall time so far).
pub fn write_optimizer(
    path: &Path,
    layout: &Layout,
    params: &[f32],
    opt: &AdamW,
    seconds: f64,
) -> Result<(), TrainError> {
    let meta = [
        ("step".to_string(), opt.step.to_string()),
        ("seconds".to_string(), format!("{seconds}")),
    ]
    .into_iter()
    .collect();
    let mut tensors = Vec::new();
    for s in &layout.slots {
        for (prefix, values) in [("p", params), ("m", &opt.m), ("v", &opt.v)] {
            tensors.push((
                format!("{prefix}.{}", s.name),
                s.shape.clone(),
                f32_bytes(&values[s.range.clone()]),
            ));
        }
    }
    write_atomically(path, &encode(path, tensors, meta)?)
}

/// What a resume state holds.
pub struct ResumeState {
    pub opt: AdamW,
    /// Training wall time so far.
    pub seconds: f64,
    /// The latest parameters, when the file has them (files of earlier versions do not:
    /// their checkpoint held the latest parameters).
    pub params: Option<Vec<f32>>,
}

/// Reads the resume state for `layout`.
pub fn read_optimizer(
    path: &Path,
    layout: &Layout,
    settings: AdamWSettings,
) -> Result<ResumeState, TrainError> {
    let bytes = read(path)?;
    let (st, meta) = parse(path, &bytes)?;
    let mut opt = AdamW::new(layout, settings);
    opt.step = meta_u64(path, &meta, "step")?;
    let has_params = st.tensor(&format!("p.{}", layout.slots[0].name)).is_ok();
    let mut params = has_params.then(|| vec![0.0f32; layout.len]);
    for s in &layout.slots {
        let fill = |prefix: &str, into: &mut [f32]| -> Result<(), TrainError> {
            into[s.range.clone()].copy_from_slice(&tensor_f32(
                path,
                &st,
                &format!("{prefix}.{}", s.name),
                &s.shape,
            )?);
            Ok(())
        };
        fill("m", &mut opt.m)?;
        fill("v", &mut opt.v)?;
        if let Some(p) = params.as_mut() {
            fill("p", p)?;
        }
    }
    let seconds = meta
        .get("seconds")
        .and_then(|v| v.parse().ok())
        .ok_or_else(|| TrainError::Metadata {
            path: path.to_owned(),
            key: "seconds",
            reason: "missing or not a number".into(),
        })?;
    Ok(ResumeState {
        opt,
        seconds,
        params,
    })
}

//! Checkpoint → image, with a report of what the conversion cost per tensor.

use half::f16;
use inkling_core::image::format::{Role, SourceLayout};
use inkling_core::image::writer::{self, FloatPayload, Payload, TensorSource};

use crate::checkpoint::Checkpoint;
use crate::error::QuantizeError;
use crate::quantiser::{dequantise, error_stats, quantise_matrix, QuantisedMatrix};
use crate::schema::schema_name;

/// How to convert.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct ConvertOptions {
    /// Columns per scale; 0 for one scale per row.
    pub group: usize,
    /// Store vectors and small float tensors as f16 instead of f32 (the decay rate stays f32).
    pub f16_floats: bool,
}

/// The cost of converting one tensor.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct TensorReport {
    /// Schema name.
    pub name: String,
    /// Storage in the image: `int8`, `f16` or `f32`.
    pub stored_as: &'static str,
    /// Largest absolute error of a weight.
    pub max_abs_error: f32,
    /// Signal-to-quantisation-noise ratio in dB (`None` when exact).
    pub sqnr_db: Option<f64>,
    /// Bytes in the image (payload and scales).
    pub bytes: usize,
}

/// The whole conversion's cost.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct ConversionReport {
    /// Per tensor, in image order.
    pub tensors: Vec<TensorReport>,
    /// Image size in bytes.
    pub image_bytes: usize,
    /// Parameters in the checkpoint.
    pub parameters: usize,
}

enum Stored {
    Int8(QuantisedMatrix),
    F32(Vec<f32>),
    F16(Vec<f16>),
}

impl Stored {
    /// The first value that is NaN or infinite once converted (e.g. `-exp(decay)` or a value
    /// beyond the f16 range), if any.
    fn first_non_finite(&self) -> Option<usize> {
        match self {
            Stored::Int8(q) => q.scales.iter().position(|s| !s.is_finite()),
            Stored::F32(v) => v.iter().position(|x| !x.is_finite()),
            Stored::F16(v) => v.iter().position(|x| !x.is_finite()),
        }
    }
}

struct Converted {
    tensors: Vec<((Role, usize), Stored)>,
    source: Option<SourceLayout>,
}

impl TensorSource for Converted {
    fn payload(&self, role: Role, block: usize) -> Payload<'_> {
        let found = self.tensors.iter().find(|(k, _)| *k == (role, block));
        match found.map(|(_, s)| s) {
            Some(Stored::Int8(q)) => Payload::Int8 {
                weights: &q.weights,
                scales: FloatPayload::F32(&q.scales),
            },
            Some(Stored::F16(v)) => Payload::Float(FloatPayload::F16(v)),
            Some(Stored::F32(v)) => Payload::Float(FloatPayload::F32(v)),
            None => Payload::Float(FloatPayload::F32(&[])),
        }
    }

    fn source_layout(&self) -> Option<SourceLayout> {
        self.source
    }
}

/// Converts a checked checkpoint into image bytes and a report.
pub fn convert(
    checkpoint: &Checkpoint,
    options: &ConvertOptions,
) -> Result<(Vec<u8>, ConversionReport), QuantizeError> {
    let mut dims = checkpoint.dims;
    dims.group = options.group;
    let mut tensors = Vec::new();
    let mut reports = Vec::new();
    for (role, block) in writer::canonical_order(&dims) {
        let name = schema_name(role, block);
        let values = checkpoint.role(role, block);
        let (rows, cols) = dims.shape(role);
        let (stored, report) = if role.is_quantised() {
            let q = quantise_matrix(values, rows, cols, options.group);
            let (max_abs, sqnr) = error_stats(values, &dequantise(&q, cols, options.group));
            let bytes = q.weights.len() + 4 * q.scales.len();
            (Stored::Int8(q), ("int8", max_abs, sqnr, bytes))
        } else if role == Role::Decay {
            let rates: Vec<f32> = values.iter().map(|&d| -libm::expf(d)).collect();
            let bytes = 4 * rates.len();
            (Stored::F32(rates), ("f32", 0.0, f64::INFINITY, bytes))
        } else if options.f16_floats {
            let h: Vec<f16> = values.iter().map(|&v| f16::from_f32(v)).collect();
            let back: Vec<f32> = h.iter().map(|v| v.to_f32()).collect();
            let (max_abs, sqnr) = error_stats(values, &back);
            let bytes = 2 * h.len();
            (Stored::F16(h), ("f16", max_abs, sqnr, bytes))
        } else {
            let bytes = 4 * values.len();
            (
                Stored::F32(values.to_vec()),
                ("f32", 0.0, f64::INFINITY, bytes),
            )
        };
        if let Some(index) = stored.first_non_finite() {
            return Err(QuantizeError::NotFinite {
                path: checkpoint.path.clone(),
                name: format!("{name} (as stored in the image)"),
                index,
            });
        }
        let (stored_as, max_abs_error, sqnr, bytes) = report;
        reports.push(TensorReport {
            name,
            stored_as,
            max_abs_error,
            sqnr_db: sqnr.is_finite().then_some(sqnr),
            bytes,
        });
        tensors.push(((role, block), stored));
    }
    let converted = Converted {
        tensors,
        source: checkpoint.source,
    };
    let len = writer::image_len(&dims, &converted);
    let mut image = vec![0u8; len];
    writer::write_image(&dims, &converted, &mut image).map_err(QuantizeError::Image)?;
    Ok((
        image,
        ConversionReport {
            tensors: reports,
            image_bytes: len,
            parameters: checkpoint.parameter_count(),
        },
    ))
}

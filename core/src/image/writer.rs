//! Lays an image out in a caller-provided buffer: the one definition of the layout that
//! the workstation converter and the tests use.

use half::f16;

use super::checksum::crc32;
use super::dims::Dims;
use super::format::{
    self, align_up, ElementType, Role, SourceLayout, TensorEntry, CRC_LEN, ENTRY_LEN, HEADER_LEN,
    SOURCE_RECORD_LEN,
};
use super::model::Model;
use crate::error::Error;

/// Values of one float tensor to write.
///
/// ```
/// use inkling_core::image::{example::tiny_tensors, format::Role, writer::*};
/// let (_, tensors) = tiny_tensors(); // the tiny model keeps its convolution in binary16
/// let conv = tensors.payload(Role::Conv, 0);
/// assert!(matches!(conv, Payload::Float(FloatPayload::F16(v)) if v.len() == 16 * 4));
/// ```
#[derive(Debug, Clone, Copy)]
pub enum FloatPayload<'a> {
    /// Stored as binary32.
    F32(&'a [f32]),
    /// Stored as binary16.
    F16(&'a [f16]),
}

/// The payload of one tensor to write.
///
/// ```
/// use inkling_core::image::{example::tiny_tensors, format::Role, writer::*};
/// let (_, tensors) = tiny_tensors();
/// assert!(matches!(tensors.payload(Role::Norm, 0), Payload::Float(_)));
/// assert!(matches!(tensors.payload(Role::Select, 0), Payload::Int8 { .. }));
/// ```
#[derive(Debug, Clone, Copy)]
pub enum Payload<'a> {
    /// A float tensor.
    Float(FloatPayload<'a>),
    /// An int8 matrix and its scales (row-major, `ceil(cols / group)` per row).
    Int8 {
        /// The weights, row-major.
        weights: &'a [i8],
        /// The scales.
        scales: FloatPayload<'a>,
    },
}

impl FloatPayload<'_> {
    fn element(&self) -> ElementType {
        match self {
            FloatPayload::F32(_) => ElementType::F32,
            FloatPayload::F16(_) => ElementType::F16,
        }
    }

    fn byte_len(&self) -> usize {
        match self {
            FloatPayload::F32(v) => 4 * v.len(),
            FloatPayload::F16(v) => 2 * v.len(),
        }
    }

    fn write(&self, out: &mut [u8]) {
        match self {
            FloatPayload::F32(v) => {
                for (dst, x) in out.chunks_exact_mut(4).zip(v.iter()) {
                    dst.copy_from_slice(&x.to_le_bytes());
                }
            }
            FloatPayload::F16(v) => {
                for (dst, x) in out.chunks_exact_mut(2).zip(v.iter()) {
                    dst.copy_from_slice(&x.to_le_bytes());
                }
            }
        }
    }
}

/// The tensors of a model, in the canonical order of [`format`]: `byte_embed`, the ten
/// roles of each block, `final_norm`, and `head` when untied.
///
/// ```
/// use inkling_core::image::{example::*, format::Role, writer::*};
/// // The tiny model with its skip weights set to zero.
/// struct NoSkip(TinyTensors);
/// impl TensorSource for NoSkip {
///     fn payload(&self, role: Role, block: usize) -> Payload<'_> {
///         match role {
///             Role::Skip => Payload::Float(FloatPayload::F32(&[0.0; 16])),
///             _ => self.0.payload(role, block),
///         }
///     }
/// }
/// let (dims, tensors) = tiny_tensors();
/// let mut out = [0u8; TINY_IMAGE_LEN];
/// assert_eq!(write_image(&dims, &NoSkip(tensors), &mut out)?, TINY_IMAGE_LEN);
/// # Ok::<(), inkling_core::Error>(())
/// ```
pub trait TensorSource {
    /// The payload of `role` in `block` (block is 0 for whole-model roles).
    fn payload(&self, role: Role, block: usize) -> Payload<'_>;

    /// The outside checkpoint layout the tensors were read from, if any: the writer then adds
    /// a source record and writes minor version 1 (see [`format`]).
    ///
    /// ```
    /// use inkling_core::image::{example::*, format::{Role, SourceLayout}, writer::*};
    /// struct FromReference(TinyTensors);
    /// impl TensorSource for FromReference {
    ///     fn payload(&self, role: Role, block: usize) -> Payload<'_> {
    ///         self.0.payload(role, block)
    ///     }
    ///     fn source_layout(&self) -> Option<SourceLayout> {
    ///         Some(SourceLayout::ReferenceCode)
    ///     }
    /// }
    /// let (dims, tensors) = tiny_tensors();
    /// assert_eq!(tensors.source_layout(), None); // the default: nothing recorded
    /// let mut out = [0u8; TINY_IMAGE_LEN + 16];
    /// let len = write_image(&dims, &FromReference(tensors), &mut out)?;
    /// let model = inkling_core::Model::from_bytes(&out[..len])?;
    /// assert_eq!(model.source_layout(), Some(SourceLayout::ReferenceCode));
    /// assert_eq!(model.version(), (1, 1));
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    fn source_layout(&self) -> Option<SourceLayout> {
        None
    }
}

/// The canonical `(role, block)` sequence for these dimensions.
///
/// ```
/// use inkling_core::image::writer::canonical_order;
/// # let image = inkling_core::image::example::tiny_image();
/// let model = inkling_core::Model::from_bytes(&image)?;
/// let table = model.tensors().map(|e| (e.role, e.block as usize));
/// assert!(table.eq(canonical_order(model.dims())));
/// # Ok::<(), inkling_core::Error>(())
/// ```
pub fn canonical_order(dims: &Dims) -> impl Iterator<Item = (Role, usize)> + '_ {
    core::iter::once((Role::ByteEmbed, 0))
        .chain((0..dims.blocks).flat_map(|b| Role::BLOCK_ROLES.into_iter().map(move |r| (r, b))))
        .chain(core::iter::once((Role::FinalNorm, 0)))
        .chain((!dims.tied_head).then_some((Role::Head, 0)))
}

fn payload_lens(p: &Payload<'_>) -> (usize, usize) {
    match p {
        Payload::Float(f) => (f.byte_len(), 0),
        Payload::Int8 { weights, scales } => (weights.len(), scales.byte_len()),
    }
}

/// Bytes the image of these tensors takes.
///
/// ```
/// use inkling_core::image::{example::*, format::ALIGN, writer::image_len};
/// let (dims, tensors) = tiny_tensors();
/// assert_eq!(image_len(&dims, &tensors), TINY_IMAGE_LEN);
/// assert_eq!(TINY_IMAGE_LEN % ALIGN, 4); // padded payloads, then the 4-byte CRC
/// ```
pub fn image_len(dims: &Dims, tensors: &dyn TensorSource) -> usize {
    let mut at = align_up(HEADER_LEN + dims.tensor_count() * ENTRY_LEN).unwrap_or(usize::MAX);
    for (role, block) in canonical_order(dims) {
        let (data, scales) = payload_lens(&tensors.payload(role, block));
        at = align_up(at + data).unwrap_or(usize::MAX);
        if scales > 0 {
            at = align_up(at + scales).unwrap_or(usize::MAX);
        }
    }
    let record = match tensors.source_layout() {
        Some(_) => SOURCE_RECORD_LEN,
        None => 0,
    };
    at + record + CRC_LEN
}

fn put(out: &mut [u8], at: usize, bytes: &[u8]) -> Result<(), Error> {
    let actual = out.len();
    out.get_mut(at..at + bytes.len())
        .ok_or(Error::BufferTooSmall {
            buffer: "image",
            needed: at + bytes.len(),
            actual,
        })?
        .copy_from_slice(bytes);
    Ok(())
}

/// Writes the image of `tensors` into `out` and returns its length.
///
/// The result is read back with [`Model::from_bytes`] before returning, so a writer bug
/// or a tensor of the wrong shape surfaces here as the reader's error.
///
/// ```
/// use inkling_core::image::{example, writer};
/// let (dims, tensors) = example::tiny_tensors();
/// let mut buf = [0u8; 8192];
/// let len = writer::write_image(&dims, &tensors, &mut buf)?;
/// assert_eq!(len, writer::image_len(&dims, &tensors));
/// # Ok::<(), inkling_core::Error>(())
/// ```
pub fn write_image(
    dims: &Dims,
    tensors: &dyn TensorSource,
    out: &mut [u8],
) -> Result<usize, Error> {
    let len = image_len(dims, tensors);
    if out.len() < len {
        return Err(Error::BufferTooSmall {
            buffer: "image",
            needed: len,
            actual: out.len(),
        });
    }
    let out = out.get_mut(..len).unwrap_or(&mut []);
    out.fill(0);
    let header: [(usize, u32); 11] = [
        (8, len as u32),
        (12, dims.d_model as u32),
        (16, dims.d_inner as u32),
        (20, dims.d_state as u32),
        (24, dims.d_conv as u32),
        (28, dims.dt_rank as u32),
        (32, dims.blocks as u32),
        (
            36,
            if dims.tied_head {
                format::FLAG_TIED_HEAD
            } else {
                0
            },
        ),
        (40, dims.norm_eps.to_bits()),
        (44, dims.group as u32),
        (48, dims.tensor_count() as u32),
    ];
    put(out, 0, &format::MAGIC)?;
    put(out, 4, &format::MAJOR_VERSION.to_le_bytes())?;
    let source = tensors.source_layout();
    let minor: u16 = if source.is_some() {
        format::MINOR_VERSION
    } else {
        0
    };
    put(out, 6, &minor.to_le_bytes())?;
    for (at, v) in header {
        put(out, at, &v.to_le_bytes())?;
    }
    put(out, 52, &(HEADER_LEN as u32).to_le_bytes())?;

    let mut at = align_up(HEADER_LEN + dims.tensor_count() * ENTRY_LEN).unwrap_or(usize::MAX);
    for (index, (role, block)) in canonical_order(dims).enumerate() {
        let payload = tensors.payload(role, block);
        let (rows, cols) = dims.shape(role);
        let (element, scale, data_offset) =
            (payload_element(&payload), payload_scale(&payload), at);
        let (data_len, scales_len) = payload_lens(&payload);
        let want_scales = match scale {
            Some(s) => rows * dims.scales_per_row(cols) * s.size(),
            None => 0,
        };
        if data_len != rows * cols * element.size() || scales_len != want_scales {
            return Err(Error::BadTensor {
                index,
                problem: crate::error::TensorProblem::BadShape,
                offset: HEADER_LEN + index * ENTRY_LEN,
            });
        }
        let target = out
            .get_mut(at..at + data_len)
            .ok_or(Error::BufferTooSmall {
                buffer: "image",
                needed: at + data_len,
                actual: len,
            })?;
        match &payload {
            Payload::Float(f) => f.write(target),
            Payload::Int8 { weights, .. } => {
                for (dst, &w) in target.iter_mut().zip(weights.iter()) {
                    *dst = w as u8;
                }
            }
        }
        at = align_up(at + data_len).unwrap_or(usize::MAX);
        let scales_offset = if let Payload::Int8 { scales, .. } = &payload {
            let s_at = at;
            if let Some(target) = out.get_mut(s_at..s_at + scales_len) {
                scales.write(target);
            }
            at = align_up(at + scales_len).unwrap_or(usize::MAX);
            s_at
        } else {
            0
        };
        let entry = TensorEntry {
            role,
            block: block as u16,
            element,
            scale,
            rows: rows as u32,
            cols: cols as u32,
            data_offset: data_offset as u32,
            scales_offset: scales_offset as u32,
        };
        let mut raw = [0u8; ENTRY_LEN];
        entry.encode(&mut raw);
        put(out, HEADER_LEN + index * ENTRY_LEN, &raw)?;
    }
    let body = len - CRC_LEN;
    if let Some(layout) = source {
        let record = body - SOURCE_RECORD_LEN;
        put(out, record, &format::SOURCE_RECORD_TAG)?;
        put(out, record + 4, &layout.code().to_le_bytes())?;
    }
    let crc = crc32(out.get(..body).unwrap_or(&[]));
    put(out, body, &crc.to_le_bytes())?;
    Model::from_bytes(out)?;
    Ok(len)
}

fn payload_element(p: &Payload<'_>) -> ElementType {
    match p {
        Payload::Float(f) => f.element(),
        Payload::Int8 { .. } => ElementType::Int8,
    }
}

fn payload_scale(p: &Payload<'_>) -> Option<ElementType> {
    match p {
        Payload::Float(_) => None,
        Payload::Int8 { scales, .. } => Some(scales.element()),
    }
}

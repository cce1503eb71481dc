//! [`Model`]: a validated, zero-copy view of an image.

use super::checksum::crc32;
use super::dims::Dims;
use super::format::{
    self, align_up, ElementType, EntryDecodeError, Role, SourceLayout, TensorEntry, CRC_LEN,
    ENTRY_LEN, HEADER_LEN, MAGIC, MAJOR_VERSION, SOURCE_RECORD_LEN, SOURCE_RECORD_TAG,
};
use super::views::{Floats, QuantMatrix};
use crate::error::{Error, TensorProblem};

/// A model image that has been validated once and can now be run without further checks.
///
/// It borrows the image bytes (from flash on a device) and copies nothing. It is small
/// (a slice and the dimensions) and `Copy`.
///
/// ```
/// use inkling_core::{Model, Error};
/// # let image = inkling_core::image::example::tiny_image();
/// let model = Model::from_bytes(&image)?;
/// assert_eq!(model.dims().blocks, 1);
/// assert_eq!(model.flash_bytes(), image.len());
///
/// // One flipped bit anywhere is caught.
/// let mut damaged = image;
/// damaged[200] ^= 0x10;
/// assert!(Model::from_bytes(&damaged).is_err());
/// # Ok::<(), Error>(())
/// ```
#[derive(Debug, Clone, Copy)]
pub struct Model<'a> {
    bytes: &'a [u8],
    dims: Dims,
}

fn u16_at(bytes: &[u8], at: usize) -> u16 {
    bytes
        .get(at..at + 2)
        .and_then(|s| <[u8; 2]>::try_from(s).ok())
        .map_or(0, u16::from_le_bytes)
}

fn u32_at(bytes: &[u8], at: usize) -> u32 {
    bytes
        .get(at..at + 4)
        .and_then(|s| <[u8; 4]>::try_from(s).ok())
        .map_or(0, u32::from_le_bytes)
}

/// A header field that must lie in `lo..=hi`, as usize.
fn ranged(bytes: &[u8], field: &'static str, at: usize, lo: u32, hi: u32) -> Result<usize, Error> {
    let v = u32_at(bytes, at);
    if v < lo || v > hi {
        return Err(Error::BadHeader { field, offset: at });
    }
    Ok(v as usize)
}

/// Reads and checks the header (everything but the checksum and the table).
fn read_header(bytes: &[u8]) -> Result<Dims, Error> {
    let tied_flags = u32_at(bytes, 36);
    if tied_flags & !format::FLAG_TIED_HEAD != 0 {
        return Err(Error::BadHeader {
            field: "flags",
            offset: 36,
        });
    }
    let eps = f32::from_bits(u32_at(bytes, 40));
    if !eps.is_finite() || eps <= 0.0 {
        return Err(Error::BadHeader {
            field: "norm_eps",
            offset: 40,
        });
    }
    let dims = Dims {
        d_model: ranged(bytes, "d_model", 12, 1, format::MAX_D_MODEL)?,
        d_inner: ranged(bytes, "d_inner", 16, 1, format::MAX_D_INNER)?,
        d_state: ranged(bytes, "d_state", 20, 1, format::MAX_D_STATE)?,
        d_conv: ranged(bytes, "d_conv", 24, 1, format::MAX_D_CONV)?,
        dt_rank: ranged(bytes, "dt_rank", 28, 1, format::MAX_DT_RANK)?,
        blocks: ranged(bytes, "blocks", 32, 1, format::MAX_BLOCKS)?,
        tied_head: tied_flags & format::FLAG_TIED_HEAD != 0,
        norm_eps: eps,
        group: ranged(bytes, "group", 44, 0, format::MAX_GROUP)?,
    };
    if u32_at(bytes, 48) as usize != dims.tensor_count() {
        return Err(Error::BadHeader {
            field: "tensor_count",
            offset: 48,
        });
    }
    if u32_at(bytes, 52) as usize != HEADER_LEN {
        return Err(Error::BadHeader {
            field: "table_offset",
            offset: 52,
        });
    }
    if u32_at(bytes, 56) != 0 || u32_at(bytes, 60) != 0 {
        return Err(Error::BadHeader {
            field: "reserved",
            offset: 56,
        });
    }
    Ok(dims)
}

/// The role and block the canonical order puts at table index `index`.
fn canonical(dims: &Dims, index: usize) -> (Role, usize) {
    let block_tensors = format::TENSORS_PER_BLOCK * dims.blocks;
    match index {
        0 => (Role::ByteEmbed, 0),
        i if i <= block_tensors => {
            let j = i - 1;
            let slot = j % format::TENSORS_PER_BLOCK;
            let role = Role::BLOCK_ROLES.get(slot).copied().unwrap_or(Role::Norm);
            (role, j / format::TENSORS_PER_BLOCK)
        }
        i if i == block_tensors + 1 => (Role::FinalNorm, 0),
        _ => (Role::Head, 0),
    }
}

fn entry_at(bytes: &[u8], index: usize) -> Option<[u8; ENTRY_LEN]> {
    let at = HEADER_LEN + index * ENTRY_LEN;
    bytes
        .get(at..at + ENTRY_LEN)
        .and_then(|s| <[u8; ENTRY_LEN]>::try_from(s).ok())
}

/// Checks that a payload of `len` bytes at `offset` is aligned and lies in `lo..hi`, and
/// returns it.
fn payload(
    bytes: &[u8],
    offset: u32,
    len: usize,
    lo: usize,
    hi: usize,
) -> Result<&[u8], TensorProblem> {
    let offset = offset as usize;
    if !offset.is_multiple_of(format::ALIGN) {
        return Err(TensorProblem::Misaligned);
    }
    let end = offset.checked_add(len).ok_or(TensorProblem::OutOfBounds)?;
    if offset < lo || end > hi {
        return Err(TensorProblem::OutOfBounds);
    }
    bytes.get(offset..end).ok_or(TensorProblem::OutOfBounds)
}

fn all_finite(values: Floats<'_>) -> bool {
    values.iter().all(f32::is_finite)
}

/// Checks one entry against the canonical order, the dimensions and the image bounds.
fn check_entry(
    bytes: &[u8],
    dims: &Dims,
    index: usize,
    table_end: usize,
    payload_end: usize,
) -> Result<(), TensorProblem> {
    let raw = entry_at(bytes, index).ok_or(TensorProblem::OutOfBounds)?;
    let e = TensorEntry::decode(&raw).map_err(|err| match err {
        EntryDecodeError::Role => TensorProblem::UnexpectedRole,
        EntryDecodeError::Type => TensorProblem::BadType,
        EntryDecodeError::Reserved => TensorProblem::Reserved,
    })?;
    let (role, block) = canonical(dims, index);
    if e.role != role || e.block as usize != block {
        return Err(TensorProblem::UnexpectedRole);
    }
    let (rows, cols) = dims.shape(role);
    if e.rows as usize != rows || e.cols as usize != cols {
        return Err(TensorProblem::BadShape);
    }
    let hi = payload_end;
    let count = rows * cols;
    if role.is_quantised() {
        let scale = match (e.element, e.scale) {
            (ElementType::Int8, Some(s @ (ElementType::F32 | ElementType::F16))) => s,
            _ => return Err(TensorProblem::BadType),
        };
        payload(bytes, e.data_offset, count, table_end, hi)?;
        let scales_len = rows * dims.scales_per_row(cols) * scale.size();
        let scales = payload(bytes, e.scales_offset, scales_len, table_end, hi)?;
        if !all_finite(floats_of(scale, scales)) {
            return Err(TensorProblem::NotFinite);
        }
    } else {
        let allowed = match role {
            Role::Decay => e.element == ElementType::F32,
            _ => matches!(e.element, ElementType::F32 | ElementType::F16),
        };
        if !allowed || e.scale.is_some() || e.scales_offset != 0 {
            return Err(TensorProblem::BadType);
        }
        let data = payload(
            bytes,
            e.data_offset,
            count * e.element.size(),
            table_end,
            hi,
        )?;
        if !all_finite(floats_of(e.element, data)) {
            return Err(TensorProblem::NotFinite);
        }
    }
    Ok(())
}

fn floats_of(element: ElementType, data: &[u8]) -> Floats<'_> {
    match element {
        ElementType::F16 => Floats::F16Le(data),
        _ => Floats::F32Le(data),
    }
}

impl<'a> Model<'a> {
    /// Validates an image and returns a view of it.
    ///
    /// Checks, in this order: length of the header, magic, version, the length field, the
    /// CRC-32, header fields against their documented ranges, and every table entry (canonical
    /// order, types, shapes, 16-byte alignment, bounds, finite floats). Any failure is an
    /// [`Error`] naming the field or entry at fault; no input makes it panic.
    ///
    /// ```
    /// use inkling_core::{Model, Error};
    /// # let image = inkling_core::image::example::tiny_image();
    /// assert!(matches!(Model::from_bytes(&image[..100]), Err(Error::Truncated { .. }) | Err(Error::LengthMismatch { .. })));
    /// assert!(Model::from_bytes(&image).is_ok());
    /// ```
    pub fn from_bytes(bytes: &'a [u8]) -> Result<Self, Error> {
        let min = HEADER_LEN + CRC_LEN;
        if bytes.len() < min {
            return Err(Error::Truncated {
                needed: min,
                actual: bytes.len(),
            });
        }
        if bytes.get(0..4) != Some(&MAGIC[..]) {
            return Err(Error::BadMagic);
        }
        let (major, minor) = (u16_at(bytes, 4), u16_at(bytes, 6));
        if major != MAJOR_VERSION {
            return Err(Error::UnsupportedVersion { major, minor });
        }
        let declared = u32_at(bytes, 8) as usize;
        if declared > bytes.len() {
            return Err(Error::Truncated {
                needed: declared,
                actual: bytes.len(),
            });
        }
        if declared != bytes.len() {
            return Err(Error::LengthMismatch {
                header: declared,
                actual: bytes.len(),
            });
        }
        let body_len = bytes.len() - CRC_LEN;
        let stored = u32_at(bytes, body_len);
        let computed = crc32(bytes.get(..body_len).unwrap_or(&[]));
        if stored != computed {
            return Err(Error::BadChecksum { stored, computed });
        }
        let dims = read_header(bytes)?;
        // From minor version 1 on, the source record sits between the payloads and the CRC.
        let payload_end = if minor >= 1 {
            let record = body_len.saturating_sub(SOURCE_RECORD_LEN);
            if bytes.get(record..record + 4) != Some(&SOURCE_RECORD_TAG[..]) {
                return Err(Error::BadHeader {
                    field: "source record",
                    offset: record,
                });
            }
            record
        } else {
            body_len
        };
        let table_end = HEADER_LEN + dims.tensor_count() * ENTRY_LEN;
        if align_up(table_end).is_none_or(|end| end > payload_end) {
            return Err(Error::Truncated {
                needed: table_end + CRC_LEN,
                actual: bytes.len(),
            });
        }
        for index in 0..dims.tensor_count() {
            check_entry(bytes, &dims, index, table_end, payload_end).map_err(|problem| {
                Error::BadTensor {
                    index,
                    problem,
                    offset: HEADER_LEN + index * ENTRY_LEN,
                }
            })?;
        }
        Ok(Model { bytes, dims })
    }

    /// The model's dimensions.
    ///
    /// ```
    /// # let image = inkling_core::image::example::tiny_image();
    /// let model = inkling_core::Model::from_bytes(&image)?;
    /// assert_eq!(model.dims(), &inkling_core::image::example::TINY_DIMS);
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub fn dims(&self) -> &Dims {
        &self.dims
    }

    /// The image bytes this model reads (all of them stay in flash).
    ///
    /// ```
    /// # let image = inkling_core::image::example::tiny_image();
    /// let model = inkling_core::Model::from_bytes(&image)?;
    /// assert_eq!(model.bytes().as_ptr(), image.as_ptr()); // borrowed, not copied
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub fn bytes(&self) -> &'a [u8] {
        self.bytes
    }

    /// Flash the image takes, in bytes.
    ///
    /// ```
    /// # let image = inkling_core::image::example::tiny_image();
    /// let model = inkling_core::Model::from_bytes(&image)?;
    /// assert_eq!(model.flash_bytes(), inkling_core::image::example::TINY_IMAGE_LEN);
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub fn flash_bytes(&self) -> usize {
        self.bytes.len()
    }

    /// The image's version as `(major, minor)`.
    ///
    /// ```
    /// use inkling_core::image::format::{MAJOR_VERSION, MINOR_VERSION};
    /// # let image = inkling_core::image::example::tiny_image();
    /// let model = inkling_core::Model::from_bytes(&image)?;
    /// // No source record: written as 1.0 (1.1 adds the record).
    /// assert_eq!(model.version(), (MAJOR_VERSION, MINOR_VERSION - 1));
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub fn version(&self) -> (u16, u16) {
        (u16_at(self.bytes, 4), u16_at(self.bytes, 6))
    }

    /// The outside checkpoint layout the converter recognised, from the source record of a
    /// version 1.1 image; `None` for a 1.0 image (the schema's own names, or a name map) and
    /// for a layout code this reader does not know.
    ///
    /// ```
    /// # let image = inkling_core::image::example::tiny_image();
    /// let model = inkling_core::Model::from_bytes(&image)?;
    /// assert_eq!(model.source_layout(), None); // written from the schema's own names
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub fn source_layout(&self) -> Option<SourceLayout> {
        let (_, minor) = self.version();
        if minor == 0 {
            return None;
        }
        let code_at = self.bytes.len() - CRC_LEN - SOURCE_RECORD_LEN + 4;
        SourceLayout::from_code(u16_at(self.bytes, code_at))
    }

    /// The CRC-32 stored at the end of the image.
    ///
    /// ```
    /// use inkling_core::image::checksum::crc32;
    /// # let image = inkling_core::image::example::tiny_image();
    /// let model = inkling_core::Model::from_bytes(&image)?;
    /// assert_eq!(model.checksum(), crc32(&image[..image.len() - 4]));
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub fn checksum(&self) -> u32 {
        u32_at(self.bytes, self.bytes.len() - CRC_LEN)
    }

    /// The tensor table, in canonical order.
    ///
    /// ```
    /// # let image = inkling_core::image::example::tiny_image();
    /// let model = inkling_core::Model::from_bytes(&image)?;
    /// assert_eq!(model.tensors().count(), model.dims().tensor_count());
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub fn tensors(&self) -> impl Iterator<Item = TensorEntry> + '_ {
        (0..self.dims.tensor_count()).filter_map(|i| self.entry(i))
    }

    fn entry(&self, index: usize) -> Option<TensorEntry> {
        entry_at(self.bytes, index).and_then(|raw| TensorEntry::decode(&raw).ok())
    }

    fn floats(&self, index: usize) -> Floats<'a> {
        let Some(e) = self.entry(index) else {
            return Floats::Native(&[]);
        };
        let len = e.rows as usize * e.cols as usize * e.element.size();
        let start = e.data_offset as usize;
        let data = self.bytes.get(start..start + len).unwrap_or(&[]);
        floats_of(e.element, data)
    }

    fn matrix(&self, index: usize) -> QuantMatrix<'a> {
        let Some(e) = self.entry(index) else {
            return QuantMatrix::new(&[], Floats::Native(&[]), 0, 0, 0);
        };
        let (rows, cols) = (e.rows as usize, e.cols as usize);
        let start = e.data_offset as usize;
        let weights = self.bytes.get(start..start + rows * cols).unwrap_or(&[]);
        let scale = e.scale.unwrap_or(ElementType::F32);
        let s_len = rows * self.dims.scales_per_row(cols) * scale.size();
        let s_start = e.scales_offset as usize;
        let scales = self.bytes.get(s_start..s_start + s_len).unwrap_or(&[]);
        QuantMatrix::new(
            weights,
            floats_of(scale, scales),
            rows,
            cols,
            self.dims.group,
        )
    }

    /// `byte_embed` [256, D].
    ///
    /// ```
    /// # let image = inkling_core::image::example::tiny_image();
    /// let model = inkling_core::Model::from_bytes(&image)?;
    /// let embed = model.byte_embed();
    /// assert_eq!((embed.rows(), embed.cols()), (256, model.dims().d_model));
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub fn byte_embed(&self) -> QuantMatrix<'a> {
        self.matrix(0)
    }

    /// The output head [256, D]: `head`, or `byte_embed` when tied.
    ///
    /// ```
    /// # let image = inkling_core::image::example::tiny_image();
    /// let model = inkling_core::Model::from_bytes(&image)?;
    /// assert!(model.dims().tied_head); // so the head is byte_embed's very bytes
    /// assert_eq!(model.head().weights().as_ptr(), model.byte_embed().weights().as_ptr());
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub fn head(&self) -> QuantMatrix<'a> {
        if self.dims.tied_head {
            self.byte_embed()
        } else {
            self.matrix(self.dims.tensor_count() - 1)
        }
    }

    /// `final_norm` `[D]`.
    ///
    /// ```
    /// # let image = inkling_core::image::example::tiny_image();
    /// let model = inkling_core::Model::from_bytes(&image)?;
    /// assert_eq!(model.final_norm().len(), model.dims().d_model);
    /// assert!(model.final_norm().iter().all(|g| g == 1.0)); // the tiny model's gains
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub fn final_norm(&self) -> Floats<'a> {
        self.floats(1 + format::TENSORS_PER_BLOCK * self.dims.blocks)
    }

    /// The int8 matrix of `role` in block `block` (empty for float roles).
    ///
    /// ```
    /// use inkling_core::image::format::Role;
    /// # let image = inkling_core::image::example::tiny_image();
    /// let model = inkling_core::Model::from_bytes(&image)?;
    /// let select = model.block_matrix(0, Role::Select);
    /// assert_eq!((select.rows(), select.cols()), model.dims().shape(Role::Select));
    /// assert_eq!(model.block_matrix(0, Role::Decay).rows(), 0); // a float role
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub fn block_matrix(&self, block: usize, role: Role) -> QuantMatrix<'a> {
        match Role::BLOCK_ROLES.iter().position(|&r| r == role) {
            Some(slot) if role.is_quantised() => self.matrix(Dims::block_index(block, slot)),
            _ => QuantMatrix::new(&[], Floats::Native(&[]), 0, 0, 0),
        }
    }

    /// The float tensor of `role` in block `block` (empty for int8 roles).
    ///
    /// ```
    /// use inkling_core::image::format::Role;
    /// # let image = inkling_core::image::example::tiny_image();
    /// let model = inkling_core::Model::from_bytes(&image)?;
    /// let decay = model.block_floats(0, Role::Decay); // stored as A = -exp(decay)
    /// assert!(decay.len() == 16 * 4 && decay.iter().all(|a| a < 0.0));
    /// assert!(model.block_floats(0, Role::Expand).is_empty()); // an int8 role
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub fn block_floats(&self, block: usize, role: Role) -> Floats<'a> {
        match Role::BLOCK_ROLES.iter().position(|&r| r == role) {
            Some(slot) if !role.is_quantised() => self.floats(Dims::block_index(block, slot)),
            _ => Floats::Native(&[]),
        }
    }
}

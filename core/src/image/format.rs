//! The image format, version 1.1, byte by byte.
//!
//! All integers are little-endian. Offsets are from the first byte of the image.
//!
//! Versions: 1.0 is the header, table, payloads and CRC below. 1.1 adds the
//! [source record](#source-record-version-11) before the CRC, which a 1.0 reader ignores (it
//! lies past every payload, inside the length and the CRC). A writer with no source to record
//! writes 1.0, byte for byte what earlier writers wrote.
//!
//! ## Header (64 bytes)
//! | offset | size | field | rule |
//! |---|---|---|---|
//! | 0 | 4 | magic | `b"INKL"` |
//! | 4 | 2 | major version | `1`; a reader rejects any other major |
//! | 6 | 2 | minor version | any; minor versions only add what old readers may ignore; 1 when a source record is present |
//! | 8 | 4 | image length | total bytes, including the trailing CRC |
//! | 12 | 4 | `d_model` (D) | 1 ..= [`MAX_D_MODEL`] |
//! | 16 | 4 | `d_inner` (I) | 1 ..= [`MAX_D_INNER`] |
//! | 20 | 4 | `d_state` (N) | 1 ..= [`MAX_D_STATE`] |
//! | 24 | 4 | `d_conv` (K) | 1 ..= [`MAX_D_CONV`] |
//! | 28 | 4 | `dt_rank` (R) | 1 ..= [`MAX_DT_RANK`] |
//! | 32 | 4 | blocks (L) | 1 ..= [`MAX_BLOCKS`] |
//! | 36 | 4 | flags | bit 0: head tied to `byte_embed`; other bits zero |
//! | 40 | 4 | `norm_eps` | f32, finite, > 0 |
//! | 44 | 4 | group size G | 0 (one scale per row) or 1 ..= 65535 columns per scale |
//! | 48 | 4 | tensor count T | `1 + 10·L + 1 + (untied ? 1 : 0)` |
//! | 52 | 4 | table offset | 64 |
//! | 56 | 8 | reserved | zero |
//!
//! ## Tensor table (T entries of 24 bytes, from byte 64)
//! | offset | size | field |
//! |---|---|---|
//! | 0 | 2 | role ([`Role`] code) |
//! | 2 | 2 | block index (0 for whole-model tensors) |
//! | 4 | 1 | element type: 0 f32, 1 f16 (IEEE 754 binary16), 2 int8 |
//! | 5 | 1 | scale type: 0 none, 1 f32, 2 f16 (int8 tensors only, and always) |
//! | 6 | 2 | reserved, zero |
//! | 8 | 4 | rows |
//! | 12 | 4 | columns (1 for vectors) |
//! | 16 | 4 | payload offset (multiple of [`ALIGN`]) |
//! | 20 | 4 | scales offset (multiple of [`ALIGN`]; 0 without scales) |
//!
//! Entries come in the canonical order: `byte_embed`, then for each block `0..L` the ten
//! block roles in the order of [`Role::BLOCK_ROLES`], then `final_norm`, then `head` if the
//! head is untied. A reader finds a tensor by arithmetic, never by search.
//!
//! ## Payloads
//! Each starts at a multiple of [`ALIGN`] bytes after the table, so a weight row can be read
//! with word loads straight from flash. Padding bytes are zero. int8 matrices are row-major,
//! symmetric (value = weight × scale); scales are row-major too, `ceil(cols / G)` per row
//! (one per row when G = 0). The decay tensor holds the continuous-time rate
//! `A = -exp(decay)` in f32, so the device never recomputes the exponential.
//!
//! ## Source record (version 1.1)
//! In an image of minor version 1 or later, the [`SOURCE_RECORD_LEN`] bytes before the CRC say
//! which outside checkpoint layout the converter recognised; no payload may reach into them.
//! | offset | size | field | rule |
//! |---|---|---|---|
//! | 0 | 4 | tag | [`SOURCE_RECORD_TAG`] |
//! | 4 | 2 | layout | [`SourceLayout`] code; a code this reader does not know reads as not recorded |
//! | 6 | 10 | reserved | zero |
//!
//! It records where the weights came from and changes nothing in how the model runs. The
//! layouts themselves are specified with the checkpoint schema (in the converter's crate,
//! `inkling-quantize`, module `schema`).
//!
//! ## Trailer
//! The last 4 bytes are the CRC-32/ISO-HDLC of every byte before them.

/// The four bytes every image starts with.
///
/// ```
/// use inkling_core::image::{example::tiny_image, format::*};
/// assert_eq!(MAGIC, *b"INKL");
/// assert_eq!(tiny_image()[..4], MAGIC);
/// ```
pub const MAGIC: [u8; 4] = *b"INKL";
/// The major version this reader and writer speak.
///
/// ```
/// use inkling_core::{Model, image::format::MAJOR_VERSION};
/// # let image = inkling_core::image::example::tiny_image();
/// assert_eq!(Model::from_bytes(&image)?.version().0, MAJOR_VERSION);
/// # Ok::<(), inkling_core::Error>(())
/// ```
pub const MAJOR_VERSION: u16 = 1;
/// The newest minor version this reader knows: the writer writes it when the image carries a
/// source record, and minor version 0 otherwise.
///
/// ```
/// use inkling_core::{Model, image::format::{MAJOR_VERSION, MINOR_VERSION}};
/// # let image = inkling_core::image::example::tiny_image();
/// assert_eq!(MINOR_VERSION, 1);
/// // The tiny image records no source, so it is written as 1.0.
/// assert_eq!(Model::from_bytes(&image)?.version(), (MAJOR_VERSION, 0));
/// # Ok::<(), inkling_core::Error>(())
/// ```
pub const MINOR_VERSION: u16 = 1;
/// Size of the source record (version 1.1) in bytes: a multiple of [`ALIGN`], so the payloads
/// before it keep their alignment.
///
/// ```
/// use inkling_core::image::format::{ALIGN, SOURCE_RECORD_LEN};
/// assert_eq!(SOURCE_RECORD_LEN % ALIGN, 0);
/// ```
pub const SOURCE_RECORD_LEN: usize = 16;
/// The four bytes a source record starts with.
///
/// ```
/// use inkling_core::image::format::SOURCE_RECORD_TAG;
/// assert_eq!(&SOURCE_RECORD_TAG, b"FROM");
/// ```
pub const SOURCE_RECORD_TAG: [u8; 4] = *b"FROM";
/// Size of the fixed header in bytes.
///
/// ```
/// use inkling_core::image::{example::tiny_image, format::*};
/// let image = tiny_image();
/// assert_eq!(HEADER_LEN, 64);
/// assert_eq!(image[52..56], (HEADER_LEN as u32).to_le_bytes()); // the table offset field
/// ```
pub const HEADER_LEN: usize = 64;
/// Size of one tensor table entry in bytes.
///
/// ```
/// use inkling_core::image::{example::tiny_image, format::*};
/// let image = tiny_image();
/// let raw: [u8; ENTRY_LEN] = image[HEADER_LEN..HEADER_LEN + ENTRY_LEN].try_into().unwrap();
/// assert_eq!(TensorEntry::decode(&raw).map(|e| e.role), Ok(Role::ByteEmbed));
/// ```
pub const ENTRY_LEN: usize = 24;
/// Size of the trailing checksum in bytes.
///
/// ```
/// use inkling_core::image::{checksum::crc32, example::tiny_image, format::CRC_LEN};
/// let image = tiny_image();
/// let body = image.len() - CRC_LEN;
/// assert_eq!(image[body..], crc32(&image[..body]).to_le_bytes());
/// ```
pub const CRC_LEN: usize = 4;
/// Alignment of every payload, in bytes.
///
/// ```
/// use inkling_core::{Model, image::format::ALIGN};
/// # let image = inkling_core::image::example::tiny_image();
/// let model = inkling_core::Model::from_bytes(&image)?;
/// let aligned = |offset: u32| offset as usize % ALIGN == 0;
/// assert!(model.tensors().all(|e| aligned(e.data_offset) && aligned(e.scales_offset)));
/// # Ok::<(), inkling_core::Error>(())
/// ```
pub const ALIGN: usize = 16;
/// The vocabulary: one symbol per byte value.
///
/// ```
/// use inkling_core::{Model, image::format::VOCAB};
/// # let image = inkling_core::image::example::tiny_image();
/// let model = inkling_core::Model::from_bytes(&image)?;
/// assert_eq!(VOCAB, usize::from(u8::MAX) + 1);
/// assert_eq!(model.byte_embed().rows(), VOCAB);
/// # Ok::<(), inkling_core::Error>(())
/// ```
pub const VOCAB: usize = 256;
/// Number of tensors each block has.
///
/// ```
/// use inkling_core::image::{example::TINY_DIMS, format::{Role, TENSORS_PER_BLOCK}};
/// assert_eq!(Role::BLOCK_ROLES.len(), TENSORS_PER_BLOCK);
/// assert_eq!(TINY_DIMS.tensor_count(), 1 + TENSORS_PER_BLOCK * TINY_DIMS.blocks + 1);
/// ```
pub const TENSORS_PER_BLOCK: usize = 10;

/// Largest `d_model` an image may declare.
///
/// ```
/// use inkling_core::{Error, Model, image::format::MAX_D_MODEL};
/// use inkling_core::image::checksum::crc32;
/// let mut image = inkling_core::image::example::tiny_image();
/// image[12..16].copy_from_slice(&(MAX_D_MODEL + 1).to_le_bytes()); // the header field d_model
/// let n = image.len() - 4; // re-seal the CRC, so the reader gets past it
/// let crc = crc32(&image[..n]).to_le_bytes();
/// image[n..].copy_from_slice(&crc);
/// let err = Model::from_bytes(&image).unwrap_err();
/// assert_eq!(err, Error::BadHeader { field: "d_model", offset: 12 });
/// ```
pub const MAX_D_MODEL: u32 = 4096;
/// Largest `d_inner` an image may declare.
///
/// ```
/// use inkling_core::{Error, Model, image::format::MAX_D_INNER};
/// use inkling_core::image::checksum::crc32;
/// let mut image = inkling_core::image::example::tiny_image();
/// image[16..20].copy_from_slice(&(MAX_D_INNER + 1).to_le_bytes()); // the header field d_inner
/// let n = image.len() - 4; // re-seal the CRC, so the reader gets past it
/// let crc = crc32(&image[..n]).to_le_bytes();
/// image[n..].copy_from_slice(&crc);
/// let err = Model::from_bytes(&image).unwrap_err();
/// assert_eq!(err, Error::BadHeader { field: "d_inner", offset: 16 });
/// ```
pub const MAX_D_INNER: u32 = 8192;
/// Largest `d_state` an image may declare.
///
/// ```
/// use inkling_core::{Error, Model, image::format::MAX_D_STATE};
/// use inkling_core::image::checksum::crc32;
/// let mut image = inkling_core::image::example::tiny_image();
/// image[20..24].copy_from_slice(&(MAX_D_STATE + 1).to_le_bytes()); // the header field d_state
/// let n = image.len() - 4; // re-seal the CRC, so the reader gets past it
/// let crc = crc32(&image[..n]).to_le_bytes();
/// image[n..].copy_from_slice(&crc);
/// let err = Model::from_bytes(&image).unwrap_err();
/// assert_eq!(err, Error::BadHeader { field: "d_state", offset: 20 });
/// ```
pub const MAX_D_STATE: u32 = 256;
/// Largest convolution width an image may declare.
///
/// ```
/// use inkling_core::{Error, Model, image::format::MAX_D_CONV};
/// use inkling_core::image::checksum::crc32;
/// let mut image = inkling_core::image::example::tiny_image();
/// image[24..28].copy_from_slice(&(MAX_D_CONV + 1).to_le_bytes()); // the header field d_conv
/// let n = image.len() - 4; // re-seal the CRC, so the reader gets past it
/// let crc = crc32(&image[..n]).to_le_bytes();
/// image[n..].copy_from_slice(&crc);
/// let err = Model::from_bytes(&image).unwrap_err();
/// assert_eq!(err, Error::BadHeader { field: "d_conv", offset: 24 });
/// ```
pub const MAX_D_CONV: u32 = 16;
/// Largest `dt_rank` an image may declare.
///
/// ```
/// use inkling_core::{Error, Model, image::format::MAX_DT_RANK};
/// use inkling_core::image::checksum::crc32;
/// let mut image = inkling_core::image::example::tiny_image();
/// image[28..32].copy_from_slice(&(MAX_DT_RANK + 1).to_le_bytes()); // the header field dt_rank
/// let n = image.len() - 4; // re-seal the CRC, so the reader gets past it
/// let crc = crc32(&image[..n]).to_le_bytes();
/// image[n..].copy_from_slice(&crc);
/// let err = Model::from_bytes(&image).unwrap_err();
/// assert_eq!(err, Error::BadHeader { field: "dt_rank", offset: 28 });
/// ```
pub const MAX_DT_RANK: u32 = 1024;
/// Largest number of blocks an image may declare.
///
/// ```
/// use inkling_core::{Error, Model, image::format::MAX_BLOCKS};
/// use inkling_core::image::checksum::crc32;
/// let mut image = inkling_core::image::example::tiny_image();
/// image[32..36].copy_from_slice(&(MAX_BLOCKS + 1).to_le_bytes()); // the header field blocks
/// let n = image.len() - 4; // re-seal the CRC, so the reader gets past it
/// let crc = crc32(&image[..n]).to_le_bytes();
/// image[n..].copy_from_slice(&crc);
/// let err = Model::from_bytes(&image).unwrap_err();
/// assert_eq!(err, Error::BadHeader { field: "blocks", offset: 32 });
/// ```
pub const MAX_BLOCKS: u32 = 64;
/// Largest scale group an image may declare (columns per scale).
///
/// ```
/// use inkling_core::{Error, Model, image::format::MAX_GROUP};
/// use inkling_core::image::checksum::crc32;
/// let mut image = inkling_core::image::example::tiny_image();
/// image[44..48].copy_from_slice(&(MAX_GROUP + 1).to_le_bytes()); // the header field group size
/// let n = image.len() - 4; // re-seal the CRC, so the reader gets past it
/// let crc = crc32(&image[..n]).to_le_bytes();
/// image[n..].copy_from_slice(&crc);
/// let err = Model::from_bytes(&image).unwrap_err();
/// assert_eq!(err, Error::BadHeader { field: "group", offset: 44 });
/// ```
pub const MAX_GROUP: u32 = 65535;

/// Header flag: the output head is `byte_embed` itself.
///
/// ```
/// use inkling_core::image::{example::{tiny_image, TINY_DIMS}, format::FLAG_TIED_HEAD};
/// let image = tiny_image();
/// let flags = u32::from_le_bytes(image[36..40].try_into().unwrap());
/// assert!(TINY_DIMS.tied_head);
/// assert_eq!(flags, FLAG_TIED_HEAD);
/// ```
pub const FLAG_TIED_HEAD: u32 = 1;

/// What a tensor is. The code is what the tensor table stores.
///
/// ```
/// use inkling_core::image::format::Role;
/// assert_eq!(Role::from_code(Role::Expand.code()), Some(Role::Expand));
/// assert_eq!(Role::Expand.name(), "expand");
/// ```
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Role {
    /// `byte_embed` [256, D], int8.
    ByteEmbed,
    /// `final_norm` `[D]`, float.
    FinalNorm,
    /// `head` [256, D], int8 (only when untied).
    Head,
    /// `blocks.l.norm` `[D]`, float.
    Norm,
    /// `blocks.l.expand` [2I, D], int8.
    Expand,
    /// `blocks.l.conv` [I, K], float.
    Conv,
    /// `blocks.l.conv_bias` `[I]`, float.
    ConvBias,
    /// `blocks.l.select` [R + 2N, I], int8.
    Select,
    /// `blocks.l.step` [I, R], float.
    Step,
    /// `blocks.l.step_bias` `[I]`, float.
    StepBias,
    /// `blocks.l.decay` [I, N], stored as `A = -exp(decay)`, f32.
    Decay,
    /// `blocks.l.skip` `[I]`, float.
    Skip,
    /// `blocks.l.contract` [D, I], int8.
    Contract,
}

impl Role {
    /// Every role: the three whole-model roles, then [`Role::BLOCK_ROLES`].
    ///
    /// ```
    /// use inkling_core::image::format::Role;
    /// assert_eq!(Role::ALL.len(), 13);
    /// assert_eq!(Role::ALL.iter().filter(|r| r.is_block_role()).count(), 10);
    /// ```
    #[allow(clippy::indexing_slicing)]
    pub const ALL: [Role; 3 + TENSORS_PER_BLOCK] = {
        // Evaluated at compile time: an index out of range fails the build.
        let mut all = [Role::Norm; 3 + TENSORS_PER_BLOCK];
        all[0] = Role::ByteEmbed;
        all[1] = Role::FinalNorm;
        all[2] = Role::Head;
        let mut i = 0;
        while i < TENSORS_PER_BLOCK {
            all[3 + i] = Role::BLOCK_ROLES[i];
            i += 1;
        }
        all
    };

    /// The ten roles of a block, in canonical table order.
    ///
    /// ```
    /// use inkling_core::{Model, image::format::Role};
    /// # let image = inkling_core::image::example::tiny_image();
    /// let model = inkling_core::Model::from_bytes(&image)?;
    /// // Block 0's entries follow byte_embed in the table, in this order.
    /// let roles: Vec<Role> = model.tensors().skip(1).take(10).map(|e| e.role).collect();
    /// assert_eq!(roles, Role::BLOCK_ROLES);
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub const BLOCK_ROLES: [Role; TENSORS_PER_BLOCK] = [
        Role::Norm,
        Role::Expand,
        Role::Conv,
        Role::ConvBias,
        Role::Select,
        Role::Step,
        Role::StepBias,
        Role::Decay,
        Role::Skip,
        Role::Contract,
    ];

    /// The code stored in the tensor table.
    ///
    /// ```
    /// use inkling_core::image::{example::tiny_image, format::{Role, HEADER_LEN}};
    /// assert_eq!((Role::ByteEmbed.code(), Role::Norm.code()), (0, 16)); // block roles from 16
    /// let image = tiny_image(); // the first table entry's role field
    /// assert_eq!(image[HEADER_LEN..HEADER_LEN + 2], Role::ByteEmbed.code().to_le_bytes());
    /// ```
    pub const fn code(self) -> u16 {
        match self {
            Role::ByteEmbed => 0,
            Role::FinalNorm => 1,
            Role::Head => 2,
            Role::Norm => 16,
            Role::Expand => 17,
            Role::Conv => 18,
            Role::ConvBias => 19,
            Role::Select => 20,
            Role::Step => 21,
            Role::StepBias => 22,
            Role::Decay => 23,
            Role::Skip => 24,
            Role::Contract => 25,
        }
    }

    /// The role with this code, if any.
    ///
    /// ```
    /// use inkling_core::image::format::Role;
    /// assert_eq!(Role::from_code(25), Some(Role::Contract));
    /// assert_eq!(Role::from_code(3), None);
    /// ```
    pub fn from_code(code: u16) -> Option<Role> {
        Role::ALL.into_iter().find(|r| r.code() == code)
    }

    /// The checkpoint schema's name for this role (without the `blocks.l.` prefix).
    ///
    /// ```
    /// use inkling_core::image::format::Role;
    /// assert_eq!(Role::StepBias.name(), "step_bias");
    /// assert_eq!(Role::ByteEmbed.name(), "byte_embed");
    /// ```
    pub const fn name(self) -> &'static str {
        match self {
            Role::ByteEmbed => "byte_embed",
            Role::FinalNorm => "final_norm",
            Role::Head => "head",
            Role::Norm => "norm",
            Role::Expand => "expand",
            Role::Conv => "conv",
            Role::ConvBias => "conv_bias",
            Role::Select => "select",
            Role::Step => "step",
            Role::StepBias => "step_bias",
            Role::Decay => "decay",
            Role::Skip => "skip",
            Role::Contract => "contract",
        }
    }

    /// Whether this role is an int8 matrix with scales (otherwise it is float).
    ///
    /// ```
    /// use inkling_core::{Model, image::format::{ElementType, Role}};
    /// assert!(Role::Select.is_quantised() && !Role::Decay.is_quantised());
    /// # let image = inkling_core::image::example::tiny_image();
    /// let model = inkling_core::Model::from_bytes(&image)?;
    /// assert!(model.tensors().all(|e| e.role.is_quantised() == (e.element == ElementType::Int8)));
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub const fn is_quantised(self) -> bool {
        matches!(
            self,
            Role::ByteEmbed | Role::Head | Role::Expand | Role::Select | Role::Contract
        )
    }

    /// Whether this role belongs to a block (otherwise to the whole model).
    ///
    /// ```
    /// use inkling_core::image::format::Role;
    /// assert!(Role::Conv.is_block_role() && !Role::FinalNorm.is_block_role());
    /// assert!(Role::BLOCK_ROLES.iter().all(|r| r.is_block_role()));
    /// ```
    pub const fn is_block_role(self) -> bool {
        !matches!(self, Role::ByteEmbed | Role::FinalNorm | Role::Head)
    }
}

/// An outside checkpoint layout the converter recognised, as the source record stores it.
///
/// ```
/// use inkling_core::image::format::SourceLayout;
/// let code = SourceLayout::ModelHubPort.code();
/// assert_eq!(SourceLayout::from_code(code), Some(SourceLayout::ModelHubPort));
/// assert_eq!(SourceLayout::ReferenceCode.name(), "reference-code");
/// ```
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SourceLayout {
    /// The tensor names and shapes of the published Mamba reference code
    /// (`backbone.embedding.weight`, `backbone.layers.{l}.mixer.in_proj.weight`, ...).
    ReferenceCode,
    /// Those of its widely used model-hub port (`backbone.embeddings.weight`, a written-out head).
    ModelHubPort,
}

impl SourceLayout {
    /// Both layouts, in code order.
    ///
    /// ```
    /// use inkling_core::image::format::SourceLayout;
    /// assert!(SourceLayout::ALL.iter().all(|l| SourceLayout::from_code(l.code()) == Some(*l)));
    /// ```
    pub const ALL: [SourceLayout; 2] = [SourceLayout::ReferenceCode, SourceLayout::ModelHubPort];

    /// The code stored in the source record.
    ///
    /// ```
    /// use inkling_core::image::format::SourceLayout;
    /// assert_eq!(SourceLayout::ReferenceCode.code(), 1);
    /// ```
    pub const fn code(self) -> u16 {
        match self {
            SourceLayout::ReferenceCode => 1,
            SourceLayout::ModelHubPort => 2,
        }
    }

    /// The layout with this code, if this reader knows it.
    ///
    /// ```
    /// use inkling_core::image::format::SourceLayout;
    /// assert_eq!(SourceLayout::from_code(2), Some(SourceLayout::ModelHubPort));
    /// assert_eq!(SourceLayout::from_code(0), None);
    /// ```
    pub fn from_code(code: u16) -> Option<SourceLayout> {
        SourceLayout::ALL.into_iter().find(|l| l.code() == code)
    }

    /// A short name for messages and options.
    ///
    /// ```
    /// use inkling_core::image::format::SourceLayout;
    /// assert_eq!(SourceLayout::ModelHubPort.name(), "model-hub");
    /// ```
    pub const fn name(self) -> &'static str {
        match self {
            SourceLayout::ReferenceCode => "reference-code",
            SourceLayout::ModelHubPort => "model-hub",
        }
    }
}

/// How the values of a tensor are stored.
///
/// ```
/// use inkling_core::image::format::ElementType;
/// assert_eq!(ElementType::from_code(1), Some(ElementType::F16));
/// assert_eq!(ElementType::F16.size(), 2);
/// ```
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ElementType {
    /// IEEE 754 binary32.
    F32,
    /// IEEE 754 binary16.
    F16,
    /// Signed 8-bit integer, with scales.
    Int8,
}

impl ElementType {
    /// The code stored in the tensor table.
    ///
    /// ```
    /// use inkling_core::image::format::ElementType;
    /// for t in [ElementType::F32, ElementType::F16, ElementType::Int8] {
    ///     assert_eq!(ElementType::from_code(t.code()), Some(t));
    /// }
    /// assert_eq!(ElementType::Int8.code(), 2);
    /// ```
    pub const fn code(self) -> u8 {
        match self {
            ElementType::F32 => 0,
            ElementType::F16 => 1,
            ElementType::Int8 => 2,
        }
    }

    /// The element type with this code, if any.
    ///
    /// ```
    /// use inkling_core::image::format::ElementType;
    /// assert_eq!(ElementType::from_code(0), Some(ElementType::F32));
    /// assert_eq!(ElementType::from_code(3), None);
    /// ```
    pub const fn from_code(code: u8) -> Option<ElementType> {
        match code {
            0 => Some(ElementType::F32),
            1 => Some(ElementType::F16),
            2 => Some(ElementType::Int8),
            _ => None,
        }
    }

    /// Bytes per element.
    ///
    /// ```
    /// use inkling_core::image::format::ElementType;
    /// assert_eq!(ElementType::F32.size(), core::mem::size_of::<f32>());
    /// assert_eq!(ElementType::Int8.size(), 1);
    /// ```
    pub const fn size(self) -> usize {
        match self {
            ElementType::F32 => 4,
            ElementType::F16 => 2,
            ElementType::Int8 => 1,
        }
    }
}

/// One tensor table entry, decoded.
///
/// ```
/// use inkling_core::image::format::{TensorEntry, Role, ElementType};
/// let e = TensorEntry { role: Role::Norm, block: 2, element: ElementType::F16, scale: None,
///                       rows: 96, cols: 1, data_offset: 1024, scales_offset: 0 };
/// let mut raw = [0u8; 24];
/// e.encode(&mut raw);
/// assert_eq!(TensorEntry::decode(&raw), Ok(e));
/// ```
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct TensorEntry {
    /// What the tensor is.
    pub role: Role,
    /// Which block (0 for whole-model tensors).
    pub block: u16,
    /// How its values are stored.
    pub element: ElementType,
    /// How its scales are stored (int8 only).
    pub scale: Option<ElementType>,
    /// Rows.
    pub rows: u32,
    /// Columns (1 for a vector).
    pub cols: u32,
    /// Offset of the payload in the image.
    pub data_offset: u32,
    /// Offset of the scales in the image (0 without scales).
    pub scales_offset: u32,
}

/// Why a raw table entry could not be decoded.
///
/// ```
/// use inkling_core::image::format::{EntryDecodeError, Role, TensorEntry};
/// let mut raw = [0u8; 24];
/// raw[0] = 3; // no role has code 3
/// assert_eq!(TensorEntry::decode(&raw), Err(EntryDecodeError::Role));
/// raw[0..2].copy_from_slice(&Role::Norm.code().to_le_bytes());
/// raw[6] = 1; // a reserved byte
/// assert_eq!(TensorEntry::decode(&raw), Err(EntryDecodeError::Reserved));
/// ```
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum EntryDecodeError {
    /// Unknown role code.
    Role,
    /// Unknown element or scale type code.
    Type,
    /// A reserved field is not zero.
    Reserved,
}

fn u16_at(raw: &[u8; ENTRY_LEN], at: usize) -> u16 {
    let mut b = [0u8; 2];
    if let Some(s) = raw.get(at..at + 2) {
        b.copy_from_slice(s);
    }
    u16::from_le_bytes(b)
}

fn u32_at(raw: &[u8; ENTRY_LEN], at: usize) -> u32 {
    let mut b = [0u8; 4];
    if let Some(s) = raw.get(at..at + 4) {
        b.copy_from_slice(s);
    }
    u32::from_le_bytes(b)
}

impl TensorEntry {
    /// Writes the entry in its 24-byte table form.
    ///
    /// ```
    /// use inkling_core::image::{example::tiny_image, format::*};
    /// let image = tiny_image();
    /// let raw: [u8; ENTRY_LEN] = image[HEADER_LEN..HEADER_LEN + ENTRY_LEN].try_into().unwrap();
    /// let mut again = [0u8; ENTRY_LEN];
    /// TensorEntry::decode(&raw).unwrap().encode(&mut again);
    /// assert_eq!(again, raw); // byte for byte what the writer wrote
    /// ```
    pub fn encode(&self, out: &mut [u8; ENTRY_LEN]) {
        let scale = self.scale.map_or(0, |s| match s {
            ElementType::F32 => 1,
            _ => 2,
        });
        let fields: [(usize, &[u8]); 9] = [
            (0, &self.role.code().to_le_bytes()),
            (2, &self.block.to_le_bytes()),
            (4, &[self.element.code()]),
            (5, &[scale]),
            (6, &[0, 0]),
            (8, &self.rows.to_le_bytes()),
            (12, &self.cols.to_le_bytes()),
            (16, &self.data_offset.to_le_bytes()),
            (20, &self.scales_offset.to_le_bytes()),
        ];
        for (at, bytes) in fields {
            if let Some(dst) = out.get_mut(at..at + bytes.len()) {
                dst.copy_from_slice(bytes);
            }
        }
    }

    /// Reads an entry from its 24-byte table form.
    ///
    /// ```
    /// use inkling_core::image::{example::tiny_image, format::*};
    /// let image = tiny_image();
    /// let raw: [u8; ENTRY_LEN] = image[HEADER_LEN..HEADER_LEN + ENTRY_LEN].try_into().unwrap();
    /// let e = TensorEntry::decode(&raw).unwrap();
    /// assert_eq!((e.role, e.element), (Role::ByteEmbed, ElementType::Int8));
    /// assert_eq!((e.rows, e.cols), (256, 8));
    /// ```
    pub fn decode(raw: &[u8; ENTRY_LEN]) -> Result<TensorEntry, EntryDecodeError> {
        let role = Role::from_code(u16_at(raw, 0)).ok_or(EntryDecodeError::Role)?;
        let element = ElementType::from_code(raw[4]).ok_or(EntryDecodeError::Type)?;
        let scale = match raw[5] {
            0 => None,
            1 => Some(ElementType::F32),
            2 => Some(ElementType::F16),
            _ => return Err(EntryDecodeError::Type),
        };
        if u16_at(raw, 6) != 0 {
            return Err(EntryDecodeError::Reserved);
        }
        Ok(TensorEntry {
            role,
            block: u16_at(raw, 2),
            element,
            scale,
            rows: u32_at(raw, 8),
            cols: u32_at(raw, 12),
            data_offset: u32_at(raw, 16),
            scales_offset: u32_at(raw, 20),
        })
    }
}

/// Rounds `n` up to the next multiple of [`ALIGN`], or `None` on overflow.
///
/// ```
/// use inkling_core::image::format::align_up;
/// assert_eq!(align_up(0), Some(0));
/// assert_eq!(align_up(17), Some(32));
/// assert_eq!(align_up(usize::MAX), None);
/// ```
pub const fn align_up(n: usize) -> Option<usize> {
    match n.checked_add(ALIGN - 1) {
        Some(v) => Some(v / ALIGN * ALIGN),
        None => None,
    }
}

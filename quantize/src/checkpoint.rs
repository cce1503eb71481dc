//! Reading a float checkpoint (safetensors; F32, F16 or BF16) in the checkpoint schema, under
//! a name map or in a recognised outside layout (all specified in [`crate::schema`]).

use std::collections::HashMap;
use std::path::{Path, PathBuf};

use half::{bf16, f16};
use inkling_core::image::format::{self, Role, SourceLayout};
use inkling_core::Dims;
use safetensors::{Dtype, SafeTensors};

use crate::error::QuantizeError;
use crate::name_map::NameMap;
use crate::outside_layout::{
    embedding_name, fill, name_there, recognise, LAYER_NORM_BIASES, OPTIONAL_BIASES,
};
use crate::schema::{schema_name, EMBED_ROWS};

/// The norm epsilon when the checkpoint's metadata has no `norm_eps` (the published block's).
pub const DEFAULT_NORM_EPS: f32 = 1e-5;

/// How to read a checkpoint.
#[derive(Debug, Clone, Default)]
pub struct ReadOptions {
    /// Names of a trainer that names tensors otherwise; the identity map lets the reader
    /// recognise the schema's own names or an outside layout.
    pub map: NameMap,
    /// Keep rows `0..256` of an embedding (and head) with more, instead of refusing it.
    pub cut_rows: bool,
    /// The norm epsilon, overriding the metadata's `norm_eps`.
    pub norm_eps: Option<f32>,
}

/// Something the reader did to fit a checkpoint to the schema, reported to the user.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Adjustment {
    /// Rows past 256 of the embedding or the head were cut (`--cut-rows`).
    RowsCut {
        /// The tensor's name in the file.
        name: String,
        /// Its rows in the file.
        rows: usize,
    },
    /// A written-out head equal to the embedding is stored once, as tied.
    HeadTied {
        /// The head's name in the file.
        name: String,
    },
    /// An all-zero bias our equations have no place for was dropped.
    ZeroBiasDropped {
        /// The tensor's name in the file.
        name: String,
    },
    /// An absent convolution bias was taken as zeros.
    ConvBiasZero {
        /// The tensor's name in the layout.
        name: String,
    },
}

impl std::fmt::Display for Adjustment {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            Adjustment::RowsCut { name, rows } => write!(
                f,
                "`{name}`: rows 256..{rows} cut ({} rows), rows 0..256 kept as the byte values",
                rows - EMBED_ROWS
            ),
            Adjustment::HeadTied { name } => write!(
                f,
                "`{name}` equals the embedding value for value: stored once, as a tied head"
            ),
            Adjustment::ZeroBiasDropped { name } => {
                write!(
                    f,
                    "`{name}` is all zeros: dropped (our equations have no such bias)"
                )
            }
            Adjustment::ConvBiasZero { name } => {
                write!(
                    f,
                    "`{name}` is absent: the convolution bias is taken as zeros"
                )
            }
        }
    }
}

/// A checked float checkpoint: every schema tensor present, consistently shaped and finite,
/// held as f32 under its schema name.
#[derive(Debug, Clone)]
pub struct Checkpoint {
    /// The dimensions read from the tensor shapes.
    pub dims: Dims,
    /// Where it was read from (for messages).
    pub path: PathBuf,
    /// The outside layout recognised, if the names were not the schema's own (or a map's).
    pub source: Option<SourceLayout>,
    /// What was done to fit it to the schema.
    pub adjustments: Vec<Adjustment>,
    tensors: HashMap<String, Vec<f32>>,
}

/// How tensor names are found in the file.
enum Naming<'a> {
    /// The schema's names through a map (the identity when none was given).
    Map(&'a NameMap),
    /// An outside layout's names.
    Outside(SourceLayout),
}

impl Naming<'_> {
    fn name(&self, role: Role, block: usize) -> String {
        match self {
            Naming::Map(map) => map.lookup_role(role, block),
            Naming::Outside(layout) => name_there(*layout, role, block),
        }
    }

    /// The name in messages, quoted.
    fn describe(&self, role: Role, block: usize) -> String {
        match self {
            Naming::Map(map) => map.describe(&schema_name(role, block)),
            Naming::Outside(_) => format!("`{}`", self.name(role, block)),
        }
    }
}

/// The shape without its axes of length 1 (which leaves the row-major order as it is).
fn squeezed(shape: &[usize]) -> Vec<usize> {
    shape.iter().copied().filter(|&n| n != 1).collect()
}

struct Reader<'a> {
    st: SafeTensors<'a>,
    path: &'a Path,
    naming: Naming<'a>,
}

impl Reader<'_> {
    fn has(&self, role: Role, block: usize) -> bool {
        self.st.tensor(&self.naming.name(role, block)).is_ok()
    }

    fn missing(&self, role: Role, block: usize) -> QuantizeError {
        let hint = match &self.naming {
            Naming::Outside(layout) => format!(" (read as the {} layout)", layout.name()),
            Naming::Map(map) if map.is_identity() && role == Role::ByteEmbed => format!(
                " (nor is there the embedding of an outside layout: `{}` or `{}`)",
                embedding_name(SourceLayout::ReferenceCode),
                embedding_name(SourceLayout::ModelHubPort)
            ),
            Naming::Map(_) => String::new(),
        };
        QuantizeError::Missing {
            path: self.path.to_path_buf(),
            name: self.naming.describe(role, block),
            hint,
        }
    }

    fn shape(&self, role: Role, block: usize) -> Result<Vec<usize>, QuantizeError> {
        self.st
            .tensor(&self.naming.name(role, block))
            .map(|t| t.shape().to_vec())
            .map_err(|_| self.missing(role, block))
    }

    fn shape_error(&self, name: &str, expected: &[usize], found: Vec<usize>) -> QuantizeError {
        let hint = if name.ends_with("A_log") && found.len() == 1 {
            ": one A_log per head is the later Mamba-2 block, whose equations differ"
        } else {
            ""
        };
        QuantizeError::Shape {
            path: self.path.to_path_buf(),
            name: name.to_string(),
            expected: expected.to_vec(),
            found,
            hint,
        }
    }

    /// The tensor `name` as f32, checked against `expected` (axes of length 1 aside) and for
    /// finiteness.
    fn read_named(&self, name: &str, expected: &[usize]) -> Result<Vec<f32>, QuantizeError> {
        let view = self.st.tensor(name).map_err(|_| QuantizeError::Missing {
            path: self.path.to_path_buf(),
            name: format!("`{name}`"),
            hint: String::new(),
        })?;
        let found = view.shape().to_vec();
        if squeezed(&found) != squeezed(expected) {
            return Err(self.shape_error(name, expected, found));
        }
        let data = view.data();
        let values: Vec<f32> = match view.dtype() {
            Dtype::F32 => data
                .chunks_exact(4)
                .map(|c| f32::from_le_bytes([c[0], c[1], c[2], c[3]]))
                .collect(),
            Dtype::F16 => data
                .chunks_exact(2)
                .map(|c| f16::from_le_bytes([c[0], c[1]]).to_f32())
                .collect(),
            Dtype::BF16 => data
                .chunks_exact(2)
                .map(|c| bf16::from_le_bytes([c[0], c[1]]).to_f32())
                .collect(),
            other => {
                return Err(QuantizeError::Dtype {
                    path: self.path.to_path_buf(),
                    name: name.to_string(),
                    dtype: format!("{other:?}"),
                })
            }
        };
        if let Some(index) = values.iter().position(|v| !v.is_finite()) {
            return Err(QuantizeError::NotFinite {
                path: self.path.to_path_buf(),
                name: name.to_string(),
                index,
            });
        }
        Ok(values)
    }

    /// A tensor of an outside layout that the model does not use: an all-zero projection bias
    /// is dropped; a norm's bias, a bias of other values, or anything else is refused.
    fn outside_extra(&self, extra: String, dims: &Dims) -> Result<Adjustment, QuantizeError> {
        let path = self.path.to_path_buf();
        let named = |template: &str| (0..dims.blocks).any(|l| fill(template, l) == extra);
        if LAYER_NORM_BIASES.into_iter().any(named) {
            return Err(QuantizeError::LayerNorm { path, name: extra });
        }
        let Some((_, role)) = OPTIONAL_BIASES.into_iter().find(|(t, _)| named(t)) else {
            return Err(QuantizeError::Unexpected { path, name: extra });
        };
        let values = self.read_named(&extra, &[dims.shape(role).0])?;
        match values.iter().position(|&v| v != 0.0) {
            Some(index) => Err(QuantizeError::NonZeroBias {
                path,
                name: extra,
                index,
                value: values[index],
            }),
            None => Ok(Adjustment::ZeroBiasDropped { name: extra }),
        }
    }

    /// A role's tensor; messages name it as the file does (a missing one also by its map line).
    fn read(
        &self,
        role: Role,
        block: usize,
        expected: &[usize],
    ) -> Result<Vec<f32>, QuantizeError> {
        if !self.has(role, block) {
            return Err(self.missing(role, block));
        }
        self.read_named(&self.naming.name(role, block), expected)
    }
}

fn limit(
    path: &Path,
    what: &'static str,
    value: usize,
    lo: usize,
    hi: u32,
) -> Result<(), QuantizeError> {
    if value < lo || value > hi as usize {
        return Err(QuantizeError::Limit {
            path: path.to_path_buf(),
            what,
            value,
            limit: hi as usize,
        });
    }
    Ok(())
}

fn read_norm_eps(bytes: &[u8], path: &Path, options: &ReadOptions) -> Result<f32, QuantizeError> {
    let container = |e: safetensors::SafeTensorError| QuantizeError::Container {
        path: path.to_path_buf(),
        reason: e.to_string(),
    };
    let (_, metadata) = SafeTensors::read_metadata(bytes).map_err(container)?;
    if let Some(eps) = options.norm_eps {
        return Ok(eps);
    }
    match metadata.metadata().as_ref().and_then(|m| m.get("norm_eps")) {
        None => Ok(DEFAULT_NORM_EPS),
        Some(v) => match v.trim().parse::<f32>() {
            Ok(e) if e.is_finite() && e > 0.0 => Ok(e),
            _ => Err(QuantizeError::Metadata {
                path: path.to_path_buf(),
                key: "norm_eps".into(),
                value: v.clone(),
            }),
        },
    }
}

impl Checkpoint {
    /// Reads and checks a checkpoint file.
    pub fn load(path: &Path, options: &ReadOptions) -> Result<Self, QuantizeError> {
        let bytes = std::fs::read(path).map_err(|source| QuantizeError::Io {
            path: path.to_path_buf(),
            source,
        })?;
        Self::from_bytes(&bytes, path, options)
    }

    /// Reads and checks a checkpoint held in memory; `path` is only for messages. With the
    /// identity map, a file without `byte_embed` is read in the outside layout its embedding's
    /// name shows, if any (see [`crate::schema`]).
    pub fn from_bytes(
        bytes: &[u8],
        path: &Path,
        options: &ReadOptions,
    ) -> Result<Self, QuantizeError> {
        if let Some(lie) = crate::header_lengths::first_mismatch(bytes) {
            return Err(QuantizeError::TensorLength {
                path: path.to_path_buf(),
                name: lie.name,
                needed: lie.needed,
                given: lie.given,
            });
        }
        let st = SafeTensors::deserialize(bytes).map_err(|e| QuantizeError::Container {
            path: path.to_path_buf(),
            reason: e.to_string(),
        })?;
        let norm_eps = read_norm_eps(bytes, path, options)?;
        let map = &options.map;
        let outside = if map.is_identity() && st.tensor("byte_embed").is_err() {
            recognise(st.names().into_iter())
        } else {
            None
        };
        let naming = match outside {
            Some(layout) => Naming::Outside(layout),
            None => Naming::Map(map),
        };
        let r = Reader { st, path, naming };

        let embed = r.shape(Role::ByteEmbed, 0)?;
        let embed_name = r.naming.name(Role::ByteEmbed, 0);
        let (vocab, d_model) = match squeezed(&embed).as_slice() {
            [v, d] if *v >= EMBED_ROWS => (*v, *d),
            _ => {
                return Err(QuantizeError::Shape {
                    path: path.to_path_buf(),
                    name: embed_name,
                    expected: vec![EMBED_ROWS, embed.last().copied().unwrap_or(0)],
                    found: embed,
                    hint: "",
                })
            }
        };
        if vocab > EMBED_ROWS && !options.cut_rows {
            return Err(QuantizeError::TooManyRows {
                path: path.to_path_buf(),
                name: embed_name,
                rows: vocab,
            });
        }
        // Blocks are numbered from 0: the count is one more than the highest block any schema
        // tensor names, so a block with a tensor missing is reported, not dropped.
        let blocks = (0..format::MAX_BLOCKS as usize)
            .filter(|&l| Role::BLOCK_ROLES.iter().any(|&role| r.has(role, l)))
            .max()
            .map_or(0, |l| l + 1);
        if blocks == 0 {
            return Err(r.missing(Role::Norm, 0));
        }
        // The dimensions from the axes that carry them; each tensor's whole shape is checked
        // when it is read.
        let axis = |role: Role, first: bool| -> Result<usize, QuantizeError> {
            let shape = r.shape(role, 0)?;
            let at = if first { shape.first() } else { shape.last() };
            at.copied()
                .ok_or_else(|| r.shape_error(&r.naming.name(role, 0), &[0, 0], shape.clone()))
        };
        let two_i = axis(Role::Expand, true)?;
        let d_conv = axis(Role::Conv, false)?;
        let dt_rank = axis(Role::Step, false)?;
        let decay = r.shape(Role::Decay, 0)?;
        let d_state = match decay.as_slice() {
            [.., n] if decay.len() >= 2 => *n,
            // One value per channel (or head) is not this block's decay: name it before the
            // shapes it would throw off.
            _ => {
                let select_rows = axis(Role::Select, true)?;
                let n = select_rows.saturating_sub(dt_rank) / 2;
                return Err(r.shape_error(&r.naming.name(Role::Decay, 0), &[two_i / 2, n], decay));
            }
        };
        let mut dims = Dims {
            d_model,
            d_inner: two_i / 2,
            d_state,
            d_conv,
            dt_rank,
            blocks,
            tied_head: !r.has(Role::Head, 0),
            norm_eps,
            group: 0,
        };
        limit(path, "d_model", dims.d_model, 1, format::MAX_D_MODEL)?;
        limit(path, "d_inner", dims.d_inner, 1, format::MAX_D_INNER)?;
        limit(path, "d_state", dims.d_state, 1, format::MAX_D_STATE)?;
        limit(path, "d_conv", dims.d_conv, 1, format::MAX_D_CONV)?;
        limit(path, "dt_rank", dims.dt_rank, 1, format::MAX_DT_RANK)?;
        limit(path, "blocks", dims.blocks, 1, format::MAX_BLOCKS)?;

        let mut tensors = HashMap::new();
        let mut adjustments = Vec::new();
        let mut used = std::collections::HashSet::new();
        for (role, block) in inkling_core::image::writer::canonical_order(&dims) {
            let (rows, cols) = dims.shape(role);
            let name = r.naming.name(role, block);
            let mut values = if role == Role::ConvBias && outside.is_some() && !r.has(role, block) {
                // Trained without a convolution bias: the same as a bias of zeros.
                adjustments.push(Adjustment::ConvBiasZero { name: name.clone() });
                vec![0.0; rows]
            } else if matches!(role, Role::ByteEmbed | Role::Head) {
                r.read(role, block, &[vocab, cols])?
            } else {
                r.read(role, block, &[rows, cols])?
            };
            if matches!(role, Role::ByteEmbed | Role::Head) && vocab > EMBED_ROWS {
                values.truncate(EMBED_ROWS * cols);
                adjustments.push(Adjustment::RowsCut {
                    name: name.clone(),
                    rows: vocab,
                });
            }
            used.insert(name);
            tensors.insert(schema_name(role, block), values);
        }
        // A written-out head equal to the embedding is the tied head.
        if !dims.tied_head && tensors.get("head") == tensors.get("byte_embed") {
            tensors.remove("head");
            dims.tied_head = true;
            adjustments.push(Adjustment::HeadTied {
                name: r.naming.name(Role::Head, 0),
            });
        }
        // Every tensor of the file must be one the model uses: an unknown one (a bias this
        // model has no place for, a block past the last) would otherwise be silently dropped.
        let mut extras: Vec<String> =
            r.st.names()
                .into_iter()
                .filter(|n| !used.contains(*n))
                .map(str::to_string)
                .collect();
        extras.sort();
        for extra in extras {
            match outside {
                Some(_) => adjustments.push(r.outside_extra(extra, &dims)?),
                None => {
                    return Err(QuantizeError::Unexpected {
                        path: path.to_path_buf(),
                        name: extra,
                    })
                }
            }
        }
        Ok(Checkpoint {
            dims,
            path: path.to_path_buf(),
            source: outside,
            adjustments,
            tensors,
        })
    }

    /// The values of a schema tensor (empty if the name is not in the schema).
    pub fn tensor(&self, name: &str) -> &[f32] {
        self.tensors.get(name).map_or(&[], Vec::as_slice)
    }

    /// The values of a role's tensor.
    pub fn role(&self, role: Role, block: usize) -> &[f32] {
        self.tensor(&schema_name(role, block))
    }

    /// Number of parameters.
    pub fn parameter_count(&self) -> usize {
        self.tensors.values().map(Vec::len).sum()
    }
}

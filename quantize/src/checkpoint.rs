//! Reading a float checkpoint in the schema of the design (safetensors; F32, F16 or BF16).

use std::collections::HashMap;
use std::path::{Path, PathBuf};

use half::{bf16, f16};
use inkling_core::image::format::{self, Role};
use inkling_core::Dims;
use safetensors::{Dtype, SafeTensors};

use crate::error::QuantizeError;
use crate::name_map::NameMap;

/// The norm epsilon when the checkpoint's metadata has no `norm_eps`.
pub const DEFAULT_NORM_EPS: f32 = 1e-5;

/// A checked float checkpoint: every schema tensor present, consistently shaped and finite,
/// held as f32 under its schema name.
#[derive(Debug, Clone)]
pub struct Checkpoint {
    /// The dimensions read from the tensor shapes.
    pub dims: Dims,
    /// Where it was read from (for messages).
    pub path: PathBuf,
    tensors: HashMap<String, Vec<f32>>,
}

/// The schema name of a tensor.
pub fn schema_name(role: Role, block: usize) -> String {
    if role.is_block_role() {
        format!("blocks.{block}.{}", role.name())
    } else {
        role.name().to_string()
    }
}

struct Reader<'a> {
    st: SafeTensors<'a>,
    path: &'a Path,
    map: &'a NameMap,
}

impl Reader<'_> {
    fn has(&self, name: &str) -> bool {
        self.st.tensor(self.map.lookup(name)).is_ok()
    }

    fn shape(&self, name: &str) -> Result<Vec<usize>, QuantizeError> {
        self.st
            .tensor(self.map.lookup(name))
            .map(|t| t.shape().to_vec())
            .map_err(|_| QuantizeError::Missing {
                path: self.path.to_path_buf(),
                name: self.map.describe(name),
            })
    }

    /// The tensor as f32, checked against `expected` and for finiteness.
    fn read(&self, name: &str, expected: &[usize]) -> Result<Vec<f32>, QuantizeError> {
        let view = self
            .st
            .tensor(self.map.lookup(name))
            .map_err(|_| QuantizeError::Missing {
                path: self.path.to_path_buf(),
                name: self.map.describe(name),
            })?;
        // A vector may be stored as [n] or [n, 1].
        let found = view.shape().to_vec();
        let same = found == expected || (expected.get(1) == Some(&1) && found == expected[..1]);
        if !same {
            return Err(QuantizeError::Shape {
                path: self.path.to_path_buf(),
                name: name.to_string(),
                expected: expected.to_vec(),
                found,
            });
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

impl Checkpoint {
    /// Reads and checks a checkpoint file.
    pub fn load(path: &Path, map: &NameMap) -> Result<Self, QuantizeError> {
        let bytes = std::fs::read(path).map_err(|source| QuantizeError::Io {
            path: path.to_path_buf(),
            source,
        })?;
        Self::from_bytes(&bytes, path, map)
    }

    /// Reads and checks a checkpoint held in memory; `path` is only for messages.
    pub fn from_bytes(bytes: &[u8], path: &Path, map: &NameMap) -> Result<Self, QuantizeError> {
        let container = |e: safetensors::SafeTensorError| QuantizeError::Container {
            path: path.to_path_buf(),
            reason: e.to_string(),
        };
        if let Some(lie) = crate::header_lengths::first_mismatch(bytes) {
            return Err(QuantizeError::TensorLength {
                path: path.to_path_buf(),
                name: lie.name,
                needed: lie.needed,
                given: lie.given,
            });
        }
        let st = SafeTensors::deserialize(bytes).map_err(container)?;
        let (_, metadata) = SafeTensors::read_metadata(bytes).map_err(container)?;
        let norm_eps = match metadata.metadata().as_ref().and_then(|m| m.get("norm_eps")) {
            None => DEFAULT_NORM_EPS,
            Some(v) => match v.trim().parse::<f32>() {
                Ok(e) if e.is_finite() && e > 0.0 => e,
                _ => {
                    return Err(QuantizeError::Metadata {
                        path: path.to_path_buf(),
                        key: "norm_eps".into(),
                        value: v.clone(),
                    })
                }
            },
        };
        let r = Reader { st, path, map };

        let embed = r.shape("byte_embed")?;
        let d_model = match embed.as_slice() {
            [v, d] if *v == format::VOCAB => *d,
            _ => {
                return Err(QuantizeError::Shape {
                    path: path.to_path_buf(),
                    name: "byte_embed".into(),
                    expected: vec![format::VOCAB, embed.get(1).copied().unwrap_or(0)],
                    found: embed,
                })
            }
        };
        // Blocks are numbered from 0: the count is one more than the highest block any schema
        // tensor names, so a block with a tensor missing is reported, not dropped.
        let blocks = (0..format::MAX_BLOCKS as usize)
            .filter(|&l| {
                Role::BLOCK_ROLES
                    .iter()
                    .any(|&role| r.has(&schema_name(role, l)))
            })
            .max()
            .map_or(0, |l| l + 1);
        if blocks == 0 {
            return Err(QuantizeError::Missing {
                path: path.to_path_buf(),
                name: map.describe("blocks.0.norm"),
            });
        }
        let two_dims = |name: &str| -> Result<(usize, usize), QuantizeError> {
            match r.shape(name)?.as_slice() {
                [a, b] => Ok((*a, *b)),
                other => Err(QuantizeError::Shape {
                    path: path.to_path_buf(),
                    name: name.to_string(),
                    expected: vec![0, 0],
                    found: other.to_vec(),
                }),
            }
        };
        let (two_i, _) = two_dims("blocks.0.expand")?;
        let (_, d_conv) = two_dims("blocks.0.conv")?;
        let (_, d_state) = two_dims("blocks.0.decay")?;
        let (_, dt_rank) = two_dims("blocks.0.step")?;
        let dims = Dims {
            d_model,
            d_inner: two_i / 2,
            d_state,
            d_conv,
            dt_rank,
            blocks,
            tied_head: !r.has("head"),
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
        for (role, block) in inkling_core::image::writer::canonical_order(&dims) {
            let name = schema_name(role, block);
            let (rows, cols) = dims.shape(role);
            let values = r.read(&name, &[rows, cols])?;
            tensors.insert(name, values);
        }
        // Every tensor of the file must be one the model uses: an unknown one (a bias this
        // model has no place for, a block past the last) would otherwise be silently dropped.
        let used: std::collections::HashSet<&str> =
            tensors.keys().map(|name| map.lookup(name)).collect();
        if let Some(extra) = r.st.names().into_iter().find(|n| !used.contains(n)) {
            return Err(QuantizeError::Unexpected {
                path: path.to_path_buf(),
                name: extra.to_string(),
            });
        }
        Ok(Checkpoint {
            dims,
            path: path.to_path_buf(),
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

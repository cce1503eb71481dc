//! The name-mapping file: serves a trainer whose tensor names differ from the schema's.
//!
//! A TOML file with one table, `[names]`, mapping the schema's name to the trainer's:
//! ```toml
//! [names]
//! "byte_embed" = "embedding.weight"
//! "blocks.0.expand" = "layers.0.in_proj.weight"
//! ```
//! Names not in the table are looked up as they are.

use std::collections::HashMap;
use std::path::{Path, PathBuf};

use crate::error::QuantizeError;

/// Schema name → name in the checkpoint.
#[derive(Debug, Clone, Default)]
pub struct NameMap {
    names: HashMap<String, String>,
    path: Option<PathBuf>,
}

#[derive(serde::Deserialize)]
#[serde(deny_unknown_fields)]
struct NameMapFile {
    names: HashMap<String, String>,
}

impl NameMap {
    /// The identity map.
    pub fn identity() -> Self {
        NameMap::default()
    }

    /// Reads a map from TOML text; `path` is only for messages.
    pub fn parse(text: &str, path: &Path) -> Result<Self, QuantizeError> {
        let file: NameMapFile = toml::from_str(text).map_err(|e| QuantizeError::NameMap {
            path: path.to_path_buf(),
            reason: e.to_string(),
        })?;
        Ok(NameMap {
            names: file.names,
            path: Some(path.to_path_buf()),
        })
    }

    /// Reads a map from a TOML file.
    pub fn load(path: &Path) -> Result<Self, QuantizeError> {
        let text = std::fs::read_to_string(path).map_err(|source| QuantizeError::Io {
            path: path.to_path_buf(),
            source,
        })?;
        Self::parse(&text, path)
    }

    /// The checkpoint's name for a schema name.
    pub fn lookup<'a>(&'a self, schema_name: &'a str) -> &'a str {
        self.names
            .get(schema_name)
            .map_or(schema_name, String::as_str)
    }

    /// How a missing tensor is named in messages: `schema (mapped to X in MAP)`.
    pub fn describe(&self, schema_name: &str) -> String {
        match (self.names.get(schema_name), &self.path) {
            (Some(theirs), Some(p)) => {
                format!("{schema_name}` (mapped to `{theirs}` by {})", p.display())
            }
            _ => schema_name.to_string(),
        }
    }
}

//! The name-mapping file: serves a trainer whose tensor names differ from the schema's
//! (specified in [`crate::schema`], "Name-mapping file").
//!
//! A TOML file with one table, `[names]`, mapping the schema's name to the trainer's; `{block}`
//! stands for every block number:
//! ```toml
//! [names]
//! "byte_embed" = "embedding.weight"
//! "blocks.{block}.expand" = "layers.{block}.in_proj.weight"
//! ```
//! Names not in the table are looked up as they are.

use std::collections::{BTreeMap, HashMap};
use std::path::{Path, PathBuf};

use inkling_core::image::format::Role;
use toml::Spanned;

use crate::error::QuantizeError;
use crate::schema::{parse_schema_name, schema_name};

/// The placeholder for a block number in a map's keys and values.
pub const BLOCK_PLACEHOLDER: &str = "{block}";

/// A checkpoint name and the map line it came from.
#[derive(Debug, Clone)]
struct Target {
    name: String,
    line: usize,
}

/// Schema name → name in the checkpoint.
#[derive(Debug, Clone, Default)]
pub struct NameMap {
    /// Exact entries, by schema name.
    exact: HashMap<String, Target>,
    /// `{block}` entries, by role.
    patterns: Vec<(Role, Target)>,
    path: Option<PathBuf>,
}

#[derive(serde::Deserialize)]
#[serde(deny_unknown_fields)]
struct NameMapFile {
    names: BTreeMap<Spanned<String>, Spanned<String>>,
}

/// The 1-based line of byte offset `at` in `text`.
fn line_of(text: &str, at: usize) -> usize {
    1 + text
        .as_bytes()
        .iter()
        .take(at)
        .filter(|&&b| b == b'\n')
        .count()
}

impl NameMap {
    /// The identity map.
    pub fn identity() -> Self {
        NameMap::default()
    }

    /// Whether this is the identity map (no file given).
    pub fn is_identity(&self) -> bool {
        self.path.is_none()
    }

    /// Reads a map from TOML text; `path` is only for messages.
    ///
    /// ```
    /// use std::path::Path;
    /// use inkling_quantize::name_map::NameMap;
    /// let text = "[names]\n\"blocks.{block}.expand\" = \"net.stage{block}.W_in\"\n";
    /// let map = NameMap::parse(text, Path::new("m.toml"))?;
    /// assert_eq!(map.lookup("blocks.3.expand"), "net.stage3.W_in");
    /// assert_eq!(map.lookup("final_norm"), "final_norm");
    ///
    /// // An exact entry wins over the pattern.
    /// let text = "[names]\n\"blocks.{block}.norm\" = \"n{block}\"\n\"blocks.2.norm\" = \"last\"\n";
    /// let map = NameMap::parse(text, Path::new("m.toml"))?;
    /// assert_eq!((map.lookup("blocks.1.norm"), map.lookup("blocks.2.norm")), ("n1".into(), "last".into()));
    ///
    /// let wrong = "[names]\n\"blocks.{block}.expnd\" = \"x{block}\"\n";
    /// let err = NameMap::parse(wrong, Path::new("m.toml")).unwrap_err().to_string();
    /// assert!(err.contains("m.toml line 2") && err.contains("blocks.{block}.expnd"), "{err}");
    /// # Ok::<(), inkling_quantize::QuantizeError>(())
    /// ```
    pub fn parse(text: &str, path: &Path) -> Result<Self, QuantizeError> {
        let fail = |line: Option<usize>, reason: String| QuantizeError::NameMap {
            path: path.to_path_buf(),
            line,
            reason,
        };
        let file: NameMapFile = toml::from_str(text).map_err(|e| {
            let line = e.span().map(|s| line_of(text, s.start));
            fail(line, e.message().to_string())
        })?;
        let mut map = NameMap {
            path: Some(path.to_path_buf()),
            ..NameMap::default()
        };
        let mut seen: HashMap<String, usize> = HashMap::new();
        for (key, value) in &file.names {
            let line = line_of(text, key.span().start);
            let (ours, theirs) = (key.get_ref(), value.get_ref());
            let key_has = ours.contains(BLOCK_PLACEHOLDER);
            if key_has != theirs.contains(BLOCK_PLACEHOLDER) {
                return Err(fail(
                    Some(line),
                    format!(
                        "`{ours}` = `{theirs}`: {BLOCK_PLACEHOLDER} must be on both sides or neither"
                    ),
                ));
            }
            if let Some(first) = seen.insert(theirs.clone(), line) {
                return Err(fail(
                    Some(line),
                    format!("`{theirs}` is already the target of line {first}"),
                ));
            }
            let target = Target {
                name: theirs.clone(),
                line,
            };
            let not_schema = || {
                fail(
                    Some(line),
                    format!(
                        "`{ours}` is not a schema name (the schema's names: byte_embed, \
                         final_norm, head, blocks.{{block}}.norm, .expand, .conv, .conv_bias, \
                         .select, .step, .step_bias, .decay, .skip, .contract)"
                    ),
                )
            };
            if key_has {
                let field = ours
                    .strip_prefix("blocks.{block}.")
                    .ok_or_else(not_schema)?;
                let role = Role::ALL
                    .into_iter()
                    .find(|r| r.is_block_role() && r.name() == field)
                    .ok_or_else(not_schema)?;
                map.patterns.push((role, target));
            } else {
                parse_schema_name(ours).ok_or_else(not_schema)?;
                map.exact.insert(ours.clone(), target);
            }
        }
        Ok(map)
    }

    /// Reads a map from a TOML file.
    pub fn load(path: &Path) -> Result<Self, QuantizeError> {
        let text = std::fs::read_to_string(path).map_err(|source| QuantizeError::Io {
            path: path.to_path_buf(),
            source,
        })?;
        Self::parse(&text, path)
    }

    fn target(&self, schema: &str) -> Option<(String, usize)> {
        if let Some(t) = self.exact.get(schema) {
            return Some((t.name.clone(), t.line));
        }
        let (role, block) = parse_schema_name(schema)?;
        self.patterns
            .iter()
            .find(|(r, _)| *r == role)
            .map(|(_, t)| {
                (
                    t.name.replace(BLOCK_PLACEHOLDER, &block.to_string()),
                    t.line,
                )
            })
    }

    /// The checkpoint's name for a schema name.
    pub fn lookup(&self, schema: &str) -> String {
        self.target(schema)
            .map_or_else(|| schema.to_string(), |(name, _)| name)
    }

    /// The checkpoint's name for a role's tensor.
    pub fn lookup_role(&self, role: Role, block: usize) -> String {
        self.lookup(&schema_name(role, block))
    }

    /// How a tensor is named in messages, quoted: `` `schema` (mapped to `X` by MAP line N)``.
    ///
    /// ```
    /// use std::path::Path;
    /// use inkling_quantize::name_map::NameMap;
    /// let map = NameMap::parse("[names]\n\"head\" = \"out.w\"\n", Path::new("m.toml"))?;
    /// assert_eq!(map.describe("head"), "`head` (mapped to `out.w` by m.toml line 2)");
    /// assert_eq!(map.describe("final_norm"), "`final_norm`");
    /// # Ok::<(), inkling_quantize::QuantizeError>(())
    /// ```
    pub fn describe(&self, schema: &str) -> String {
        match (self.target(schema), &self.path) {
            (Some((theirs, line)), Some(p)) => {
                format!(
                    "`{schema}` (mapped to `{theirs}` by {} line {line})",
                    p.display()
                )
            }
            _ => format!("`{schema}`"),
        }
    }
}

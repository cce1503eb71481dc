//! The outside checkpoint layouts: the one table from the schema's names and shapes to theirs,
//! read by the checkpoint reader and written by the exporter (specified in [`crate::schema`]).

use inkling_core::image::format::{Role, SourceLayout};
use inkling_core::Dims;

/// How a tensor's shape in an outside layout relates to the schema's.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum ShapeThere {
    /// The schema's shape.
    Same,
    /// A 1-D convolution layer's weight: `[I, 1, K]` for the schema's `[I, K]`.
    ConvChannels,
}

/// One row of the table: a role, its name there (`{l}` for the block) and its shape there.
struct Entry {
    role: Role,
    name: &'static str,
    shape: ShapeThere,
}

const fn entry(role: Role, name: &'static str, shape: ShapeThere) -> Entry {
    Entry { role, name, shape }
}

/// Both layouts but for the embedding's name (see [`embedding_name`]).
const TABLE: [Entry; 12] = [
    entry(
        Role::Norm,
        "backbone.layers.{l}.norm.weight",
        ShapeThere::Same,
    ),
    entry(
        Role::Expand,
        "backbone.layers.{l}.mixer.in_proj.weight",
        ShapeThere::Same,
    ),
    entry(
        Role::Conv,
        "backbone.layers.{l}.mixer.conv1d.weight",
        ShapeThere::ConvChannels,
    ),
    entry(
        Role::ConvBias,
        "backbone.layers.{l}.mixer.conv1d.bias",
        ShapeThere::Same,
    ),
    entry(
        Role::Select,
        "backbone.layers.{l}.mixer.x_proj.weight",
        ShapeThere::Same,
    ),
    entry(
        Role::Step,
        "backbone.layers.{l}.mixer.dt_proj.weight",
        ShapeThere::Same,
    ),
    entry(
        Role::StepBias,
        "backbone.layers.{l}.mixer.dt_proj.bias",
        ShapeThere::Same,
    ),
    entry(
        Role::Decay,
        "backbone.layers.{l}.mixer.A_log",
        ShapeThere::Same,
    ),
    entry(Role::Skip, "backbone.layers.{l}.mixer.D", ShapeThere::Same),
    entry(
        Role::Contract,
        "backbone.layers.{l}.mixer.out_proj.weight",
        ShapeThere::Same,
    ),
    entry(Role::FinalNorm, "backbone.norm_f.weight", ShapeThere::Same),
    entry(Role::Head, "lm_head.weight", ShapeThere::Same),
];

/// Biases the published block has only when trained with a bias option, with the matrix whose
/// output they add to; our equations have none, so the reader drops them when all zero and
/// refuses them otherwise.
pub const OPTIONAL_BIASES: [(&str, Role); 2] = [
    ("backbone.layers.{l}.mixer.in_proj.bias", Role::Expand),
    ("backbone.layers.{l}.mixer.out_proj.bias", Role::Contract),
];

/// Biases that mean layer norm instead of RMS norm; refused.
pub const LAYER_NORM_BIASES: [&str; 2] = ["backbone.layers.{l}.norm.bias", "backbone.norm_f.bias"];

/// The embedding's name in a layout: the one name in which the two differ.
///
/// ```
/// use inkling_core::image::format::SourceLayout;
/// use inkling_quantize::outside_layout::embedding_name;
/// assert_eq!(embedding_name(SourceLayout::ReferenceCode), "backbone.embedding.weight");
/// assert_eq!(embedding_name(SourceLayout::ModelHubPort), "backbone.embeddings.weight");
/// ```
pub const fn embedding_name(layout: SourceLayout) -> &'static str {
    match layout {
        SourceLayout::ReferenceCode => "backbone.embedding.weight",
        SourceLayout::ModelHubPort => "backbone.embeddings.weight",
    }
}

/// Whether a layout writes out the head when it is tied to the embedding.
///
/// ```
/// use inkling_core::image::format::SourceLayout;
/// use inkling_quantize::outside_layout::writes_tied_head;
/// assert!(writes_tied_head(SourceLayout::ModelHubPort));
/// assert!(!writes_tied_head(SourceLayout::ReferenceCode));
/// ```
pub const fn writes_tied_head(layout: SourceLayout) -> bool {
    matches!(layout, SourceLayout::ModelHubPort)
}

/// A `{l}` template with the block number filled in.
pub fn fill(template: &str, block: usize) -> String {
    template.replace("{l}", &block.to_string())
}

/// The layout whose embedding a checkpoint with these tensor names has, if any.
///
/// ```
/// use inkling_core::image::format::SourceLayout;
/// use inkling_quantize::outside_layout::recognise;
/// let names = ["backbone.embeddings.weight", "backbone.norm_f.weight"];
/// assert_eq!(recognise(names.into_iter()), Some(SourceLayout::ModelHubPort));
/// assert_eq!(recognise(["byte_embed"].into_iter()), None);
/// ```
pub fn recognise<'a>(mut names: impl Iterator<Item = &'a str>) -> Option<SourceLayout> {
    names.find_map(|name| {
        SourceLayout::ALL
            .into_iter()
            .find(|&l| embedding_name(l) == name)
    })
}

/// A role's tensor name in a layout.
///
/// ```
/// use inkling_core::image::format::{Role, SourceLayout};
/// use inkling_quantize::outside_layout::name_there;
/// assert_eq!(name_there(SourceLayout::ReferenceCode, Role::Decay, 3),
///            "backbone.layers.3.mixer.A_log");
/// ```
pub fn name_there(layout: SourceLayout, role: Role, block: usize) -> String {
    if role == Role::ByteEmbed {
        return embedding_name(layout).to_string();
    }
    TABLE
        .iter()
        .find(|e| e.role == role)
        .map_or_else(|| role.name().to_string(), |e| fill(e.name, block))
}

/// How a role's shape there relates to the schema's.
fn shape_there(role: Role) -> ShapeThere {
    TABLE
        .iter()
        .find(|e| e.role == role)
        .map_or(ShapeThere::Same, |e| e.shape)
}

/// A role's shape there, for model dimensions `dims` (`rows` rows for the embedding and head).
///
/// ```
/// use inkling_core::image::{example::TINY_DIMS, format::Role};
/// use inkling_quantize::outside_layout::shape_of;
/// let (i, k) = (TINY_DIMS.d_inner, TINY_DIMS.d_conv);
/// assert_eq!(shape_of(&TINY_DIMS, Role::Conv), vec![i, 1, k]);
/// assert_eq!(shape_of(&TINY_DIMS, Role::Skip), vec![i]);
/// ```
pub fn shape_of(dims: &Dims, role: Role) -> Vec<usize> {
    let (rows, cols) = dims.shape(role);
    let vector = matches!(
        role,
        Role::Norm | Role::ConvBias | Role::StepBias | Role::Skip | Role::FinalNorm
    );
    match shape_there(role) {
        ShapeThere::ConvChannels => vec![rows, 1, cols],
        ShapeThere::Same if vector => vec![rows],
        ShapeThere::Same => vec![rows, cols],
    }
}

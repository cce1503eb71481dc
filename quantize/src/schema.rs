//! The checkpoint schema, version 1.1: what `inkling convert` reads.
//!
//! The packed image the converter writes is specified beside this, in the core crate
//! (`core/src/image/format.rs`). This page specifies its input.
//!
//! Versions: 1.0 is the schema's own names (below) and a name-mapping file renaming them
//! tensor by tensor. 1.1 adds the `{block}` placeholder in the name-mapping file, singleton
//! axes, a written-out head equal to the embedding, and the two outside layouts.
//!
//! ## Container
//! One safetensors file: an 8-byte little-endian header length, a JSON header naming each
//! tensor's `dtype`, `shape` and `data_offsets`, then the data. Element types F32, F16 (IEEE 754
//! binary16) and BF16 (bfloat16, the top half of a binary32); the types may differ from tensor to
//! tensor. Every value must be finite. (A checkpoint saved as a PyTorch pickle, as the reference
//! code saves its own, is re-saved as safetensors first; the converter runs no pickle.) Optional
//! `__metadata__` keys:
//!
//! | key | value | default |
//! |---|---|---|
//! | `norm_eps` | the RMS norm's epsilon, a positive decimal number | `1e-5` (also the reference code's and the model-hub port's default) |
//!
//! `inkling convert --norm-eps` overrides it, for a checkpoint trained with another epsilon that
//! does not say so. Other metadata keys are ignored.
//!
//! ## Tensors (the schema's own names)
//! Dimensions are read from the shapes: D (model width), I (inner width), N (state size),
//! K (convolution width), R (step rank), L (blocks, numbered `0..L` with none missing).
//!
//! | name | shape | enters (design's model equations, per byte `b`) |
//! |---|---|---|
//! | `byte_embed` | `[256, D]` | `u = byte_embed[b]`; row `b` is byte value `b` |
//! | `blocks.{l}.norm` | `[D]` | `h = rmsnorm(u) * norm` |
//! | `blocks.{l}.expand` | `[2I, D]` | `[x; z] = expand · h`; rows `0..I` are `x`, rows `I..2I` are `z` |
//! | `blocks.{l}.conv` | `[I, K]` | `x = silu(conv_bias + Σ_k conv[:, k] * x_{t-K+1+k})`; column `K-1` meets the newest input |
//! | `blocks.{l}.conv_bias` | `[I]` | the same |
//! | `blocks.{l}.select` | `[R + 2N, I]` | `[r; B; C] = select · x`, in that row order |
//! | `blocks.{l}.step` | `[I, R]` | `dt = softplus(step · r + step_bias)` |
//! | `blocks.{l}.step_bias` | `[I]` | the same |
//! | `blocks.{l}.decay` | `[I, N]` | `A = -exp(decay)`; `s = exp(dt[i] A[i,n]) s + dt[i] B[n] x[i]` |
//! | `blocks.{l}.skip` | `[I]` | `y = (s · C + skip * x) * silu(z)` |
//! | `blocks.{l}.contract` | `[D, I]` | `u = u + contract · y` |
//! | `final_norm` | `[D]` | `logits = head · (rmsnorm(u) * final_norm)` |
//! | `head` (optional) | `[256, D]` | the same; absent means tied: `head = byte_embed` |
//!
//! with `rmsnorm(v) = v / sqrt(mean(v²) + norm_eps)`, `silu(v) = v / (1 + exp(-v))` and
//! `softplus(v) = ln(1 + exp(v))`. All matrices are row-major `[out, in]`, as a dense layer
//! stores its weight.
//!
//! ## Shapes: what else is taken
//! - **Singleton axes**: a tensor whose shape equals the schema's once axes of length 1 are
//!   removed is read as the schema's shape (removing such an axis leaves the row-major order of
//!   the values as it is): a 1-D convolution layer's `[I, 1, K]`, a vector stored `[n, 1]`.
//! - **A written-out head** equal value for value to the embedding is stored once, as a tied
//!   head, and the converter says so.
//! - **More than 256 embedding rows** (a vocabulary padded, or with tokens beyond the bytes) are
//!   refused, with the number found; `convert --cut-rows` keeps rows `0..256` of the embedding
//!   and of a written-out head (so row `b` must be byte value `b`) and reports the rows cut.
//!   Fewer than 256 rows are refused.
//! - Every tensor of the file must be one the model uses, except those the layouts below
//!   name: a tensor the model has no place for is refused by name, never dropped silently.
//!
//! ## Name-mapping file (`convert --map`)
//! A TOML file with one table, `[names]`, of `"schema name" = "name in the checkpoint"`:
//! ```toml
//! [names]
//! "byte_embed" = "tok.weight"
//! "blocks.{block}.expand" = "net.stage{block}.W_in"
//! "blocks.3.expand" = "net.last.W_in"   # an exact entry wins over the pattern
//! ```
//! `{block}` in a key stands for every block number and must then appear in the value (and only
//! then). Names not in the table are looked up as they are. A key that is not a schema name, a
//! placeholder on one side only, or two keys naming the same checkpoint tensor are refused
//! with the map's line. A map turns layout recognition off.
//!
//! ## Outside layouts (recognised with no map)
//! When the file has no `byte_embed`, the converter recognises these by their embedding's name,
//! then reads every tensor by its name there and checks its shape. The image records which
//! one it was (image format 1.1, source record); `inkling inspect` shows it.
//!
//! | schema | reference code (`reference-code`) | model-hub port (`model-hub`) | shape there |
//! |---|---|---|---|
//! | `byte_embed` | `backbone.embedding.weight` | `backbone.embeddings.weight` | `[V, D]`, V ≥ 256 |
//! | `blocks.{l}.norm` | `backbone.layers.{l}.norm.weight` | the same | `[D]` |
//! | `blocks.{l}.expand` | `backbone.layers.{l}.mixer.in_proj.weight` | the same | `[2I, D]` |
//! | `blocks.{l}.conv` | `backbone.layers.{l}.mixer.conv1d.weight` | the same | `[I, 1, K]` |
//! | `blocks.{l}.conv_bias` | `backbone.layers.{l}.mixer.conv1d.bias` | the same | `[I]` |
//! | `blocks.{l}.select` | `backbone.layers.{l}.mixer.x_proj.weight` | the same | `[R + 2N, I]` |
//! | `blocks.{l}.step` | `backbone.layers.{l}.mixer.dt_proj.weight` | the same | `[I, R]` |
//! | `blocks.{l}.step_bias` | `backbone.layers.{l}.mixer.dt_proj.bias` | the same | `[I]` |
//! | `blocks.{l}.decay` | `backbone.layers.{l}.mixer.A_log` | the same | `[I, N]` |
//! | `blocks.{l}.skip` | `backbone.layers.{l}.mixer.D` | the same | `[I]` |
//! | `blocks.{l}.contract` | `backbone.layers.{l}.mixer.out_proj.weight` | the same | `[D, I]` |
//! | `final_norm` | `backbone.norm_f.weight` | the same | `[D]` |
//! | `head` | `lm_head.weight` (absent when tied) | `lm_head.weight` (written out when tied) | `[V, D]` |
//!
//! Their equations, checked against ours term by term:
//! - **The same in meaning**: `in_proj`'s output split in two halves, `x` first then the gate
//!   `z`; the depthwise convolution with `K - 1` zeros of padding before the text and its output
//!   cut to the text's length is our causal window, tap `K-1` on the newest input (a 1-D
//!   convolution layer computes a cross-correlation, so no tap is reversed); SiLU after it;
//!   `x_proj`'s output split `[R, N, N]` into step input, `B`, `C`; `dt = softplus(dt_proj(r))`
//!   with `dt_proj`'s bias inside the softplus, as ours; `A = -exp(A_log)` exactly as our
//!   `decay`; `exp(dt A)` and `dt B x` as the discretisation; `D` is our `skip`; the gate
//!   `silu(z)`; pre-norm residual blocks and a final norm; RMS norm with the weight applied after
//!   the division by `sqrt(mean(v²) + eps)`.
//! - **Biases of `in_proj` and `out_proj`** (off by default in both codes, on when trained with a
//!   bias option): read if present; all zeros are dropped and reported, any other value is
//!   refused by name, since our equations have no place for them.
//! - **`conv1d.bias`** absent (trained without the convolution bias) is taken as zeros, reported.
//! - **A norm's `.bias`** means layer norm (trained with RMS norm off): refused by name, since
//!   layer norm subtracts the mean and ours does not.
//! - **The epsilon** is not in either code's weight file: it is read from `norm_eps` metadata,
//!   else `--norm-eps`, else `1e-5`, both codes' default.
//! - **Precision**: both codes may keep the residual in f32 and cast the norm's output to the
//!   weights' type; that changes rounding, not the equations. We run f32 throughout.
//! - **The activation** is assumed SiLU, both codes' default and the only one the published block
//!   uses; a model trained with another cannot be told from its weights.
//! - **Vocabulary**: both codes pad the vocabulary to a multiple of 8 (or more) rows; for a byte
//!   model these are the rows past 256 that `--cut-rows` drops.
//! - **Layouts of the later "Mamba-2" block** (one `A_log` per head, a norm inside the mixer) are
//!   not these equations and are refused by the shape of `A_log`.
//!
//! `inkling convert --to reference-code` (or `model-hub`) writes one of our checkpoints in that
//! layout (F32, with `norm_eps` in the metadata), from the same table; converting the result gives
//! the same image bit for bit, save the source record.

use inkling_core::image::format::Role;

/// This schema's version, as messages name it.
///
/// ```
/// assert_eq!(inkling_quantize::schema::SCHEMA_VERSION, "1.1");
/// ```
pub const SCHEMA_VERSION: &str = "1.1";

/// Where the schema is specified, as messages name it.
///
/// ```
/// assert!(inkling_quantize::schema::SCHEMA_SPEC.contains("quantize/src/schema.rs"));
/// ```
pub const SCHEMA_SPEC: &str = "checkpoint schema 1.1, quantize/src/schema.rs";

/// The number of embedding rows the model reads: one per byte value.
pub const EMBED_ROWS: usize = inkling_core::image::format::VOCAB;

/// The schema name of a tensor.
///
/// ```
/// use inkling_core::image::format::Role;
/// use inkling_quantize::schema::schema_name;
/// assert_eq!(schema_name(Role::StepBias, 2), "blocks.2.step_bias");
/// assert_eq!(schema_name(Role::FinalNorm, 0), "final_norm");
/// ```
pub fn schema_name(role: Role, block: usize) -> String {
    if role.is_block_role() {
        format!("blocks.{block}.{}", role.name())
    } else {
        role.name().to_string()
    }
}

/// The role whose schema name, with `block` for a block role, is `name`.
///
/// ```
/// use inkling_core::image::format::Role;
/// use inkling_quantize::schema::parse_schema_name;
/// assert_eq!(parse_schema_name("blocks.4.conv"), Some((Role::Conv, 4)));
/// assert_eq!(parse_schema_name("head"), Some((Role::Head, 0)));
/// assert_eq!(parse_schema_name("blocks.x.conv"), None);
/// ```
pub fn parse_schema_name(name: &str) -> Option<(Role, usize)> {
    if let Some(rest) = name.strip_prefix("blocks.") {
        let (block, field) = rest.split_once('.')?;
        let block: usize = block.parse().ok()?;
        let role = Role::ALL
            .into_iter()
            .find(|r| r.is_block_role() && r.name() == field)?;
        return Some((role, block));
    }
    Role::ALL
        .into_iter()
        .find(|r| !r.is_block_role() && r.name() == name)
        .map(|r| (r, 0))
}

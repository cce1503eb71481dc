//! A checkpoint written in an outside layout, so that a model made here can be fine-tuned or
//! studied with the code that layout belongs to. Names and shapes come from the same table
//! the reader uses ([`crate::outside_layout`]); specified in [`crate::schema`].

use std::collections::HashMap;

use inkling_core::image::format::{Role, SourceLayout};
use inkling_core::image::writer::canonical_order;
use safetensors::tensor::TensorView;
use safetensors::Dtype;

use crate::checkpoint::Checkpoint;
use crate::error::QuantizeError;
use crate::outside_layout::{name_there, shape_of, writes_tied_head};

/// The safetensors bytes of `checkpoint` in `layout`: F32 (every value read is exact in F32),
/// with `norm_eps` in the metadata.
pub fn export(checkpoint: &Checkpoint, layout: SourceLayout) -> Result<Vec<u8>, QuantizeError> {
    let dims = checkpoint.dims;
    let mut roles: Vec<(Role, usize)> = canonical_order(&dims).collect();
    // A tied head is written out only by layouts that do so.
    if dims.tied_head && writes_tied_head(layout) {
        roles.push((Role::Head, 0));
    }
    let tensors: Vec<(String, Vec<usize>, Vec<u8>)> = roles
        .into_iter()
        .map(|(role, block)| {
            let values = match role {
                Role::Head if dims.tied_head => checkpoint.role(Role::ByteEmbed, 0),
                _ => checkpoint.role(role, block),
            };
            let bytes = values.iter().flat_map(|v| v.to_le_bytes()).collect();
            (
                name_there(layout, role, block),
                shape_of(&dims, role),
                bytes,
            )
        })
        .collect();
    let views = tensors
        .iter()
        .map(|(name, shape, bytes)| {
            TensorView::new(Dtype::F32, shape.clone(), bytes).map(|view| (name.as_str(), view))
        })
        .collect::<Result<Vec<_>, _>>();
    let metadata = HashMap::from([("norm_eps".to_string(), dims.norm_eps.to_string())]);
    views
        .and_then(|views| safetensors::serialize(views, Some(metadata)))
        .map_err(|e| QuantizeError::Container {
            path: checkpoint.path.clone(),
            reason: format!("writing the {} layout: {e}", layout.name()),
        })
}

//! Opening a model file: a packed image (int8 engine) or a float checkpoint (float engine).

use std::path::Path;

use inkling_core::engine::weights::Weights;
use inkling_core::{Dims, Model};
use inkling_quantize::{Checkpoint, ConvertOptions, FloatModel, ReadOptions};

use crate::error::HostError;
use crate::file_kind::{check, Wanted};

/// A model file's contents, checked.
pub enum ModelFile {
    /// An image's bytes (already validated once).
    Image(Vec<u8>),
    /// A checkpoint, ready for the float engine.
    Float(Box<FloatModel>),
}

/// Whether these bytes start like an image.
fn is_image(bytes: &[u8]) -> bool {
    bytes.starts_with(&inkling_core::image::format::MAGIC)
}

/// The validated model view of image `bytes` read from `path` (named in the error).
pub fn image_model<'a>(bytes: &'a [u8], path: &Path) -> Result<Model<'a>, HostError> {
    Model::from_bytes(bytes).map_err(|source| HostError::Image {
        path: path.to_path_buf(),
        source,
    })
}

impl ModelFile {
    /// Opens an image or a checkpoint (told apart by the image magic); another kind of file
    /// is refused with what it is.
    pub fn open(path: &Path) -> Result<Self, HostError> {
        check(path, Wanted::Model)?;
        let bytes = std::fs::read(path).map_err(HostError::io(path))?;
        if is_image(&bytes) {
            image_model(&bytes, path)?;
            Ok(ModelFile::Image(bytes))
        } else {
            let ck = Checkpoint::from_bytes(&bytes, path, &ReadOptions::default())?;
            Ok(ModelFile::Float(Box::new(FloatModel::new(ck))))
        }
    }

    /// The image's bytes, if this is an image.
    pub fn image_bytes(&self) -> Option<&[u8]> {
        match self {
            ModelFile::Image(bytes) => Some(bytes),
            ModelFile::Float(_) => None,
        }
    }

    /// `"int8"` or `"f32"`.
    pub fn engine_name(&self) -> &'static str {
        match self {
            ModelFile::Image(_) => "int8",
            ModelFile::Float(_) => "f32",
        }
    }

    /// Runs `f` with the model's weights, whichever engine they are for.
    pub fn with_weights<R>(&self, f: impl FnOnce(&dyn Weights) -> R) -> R {
        match self {
            ModelFile::Image(bytes) => match Model::from_bytes(bytes) {
                Ok(model) => f(&model),
                // Validated in `open`; the bytes have not changed since.
                Err(_) => unreachable!("image validated when opened"),
            },
            ModelFile::Float(fm) => f(fm.as_ref()),
        }
    }

    /// The model's dimensions.
    pub fn dims(&self) -> Dims {
        self.with_weights(|w| *w.dims())
    }
}

/// The bytes of an image for `path`: the file itself if it is an image, or a checkpoint
/// converted in memory with default options.
pub fn load_image(path: &Path) -> Result<Vec<u8>, HostError> {
    match ModelFile::open(path)? {
        ModelFile::Image(bytes) => Ok(bytes),
        ModelFile::Float(fm) => {
            let (image, _) =
                inkling_quantize::convert(fm.checkpoint(), &ConvertOptions::default())?;
            Ok(image)
        }
    }
}

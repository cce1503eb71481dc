//! Models of the trainer's preset shapes, initialised as published (untrained), for
//! benchmarks and soak tests: the float checkpoint and its int8 image.

use std::path::Path;

use inkling_host::commands::train::Preset;
use inkling_quantize::{convert, Checkpoint, ConvertOptions, FloatModel};
use inkling_train::checkpoint_file::write_checkpoint;
use inkling_train::model_params::{init_params, Layout};
use rand::SeedableRng;

/// A preset's float model and int8 image, from a seeded initialisation.
pub fn preset_model(preset: Preset, seed: u64, dir: &Path) -> (FloatModel, Vec<u8>) {
    let layout = Layout::new(preset.dims());
    let mut rng = rand::rngs::StdRng::seed_from_u64(seed);
    let params: Vec<f32> = init_params(&layout, &mut rng);
    let path = dir.join(format!("{}.safetensors", preset.name()));
    write_checkpoint(&path, &layout, &params, preset.name(), 0).expect("write the checkpoint");
    let ck = Checkpoint::load(&path, &inkling_quantize::ReadOptions::default())
        .expect("read the checkpoint back");
    let (image, _) = convert(&ck, &ConvertOptions::default()).expect("convert");
    (FloatModel::new(ck), image)
}

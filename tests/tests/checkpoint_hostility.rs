//! Hostile files at the command line: `inkling convert` on checkpoints with NaN, infinity, a
//! missing or misshaped tensor, a wrong dtype, or a container header that lies about sizes,
//! and `inkling inspect` on images with a wrong version or checksum. Each must exit non-zero
//! with a message naming the tensor (or the file, for container faults) and never panic: a
//! Rust panic exits with status 101 (the runtime's documented panic exit code), which is
//! asserted against. No output file may appear.
//!
//! The container layout is the published safetensors format: an 8-byte little-endian header
//! length, a JSON header mapping each name to `dtype`, `shape` and `data_offsets` (relative
//! to the end of the header), then the data. The base checkpoint comes from
//! `tests/reference/make_checkpoint.py`; the damage is done here.

use std::path::Path;
use std::process::{Command, Output};

use inkling_core::image::checksum::crc32;
use inkling_core::image::format::CRC_LEN;
use inkling_tests::checkpoint_spec::{CheckpointSpec, Dtype};
use inkling_tests::inkling_cli::inkling_binary;
use inkling_tests::numpy_reference::make_checkpoint;
use serde_json::{json, Map, Value};

/// One tensor of a container: name, dtype string, shape and raw bytes.
#[derive(Clone, Debug)]
struct Tensor {
    name: String,
    dtype: String,
    shape: Vec<usize>,
    data: Vec<u8>,
}

/// A parsed safetensors file, tensors in file order.
#[derive(Clone, Debug)]
struct Container {
    metadata: Option<Value>,
    tensors: Vec<Tensor>,
}

impl Container {
    fn parse(bytes: &[u8]) -> Self {
        let len = u64::from_le_bytes(bytes[..8].try_into().expect("8 bytes")) as usize;
        let header: Map<String, Value> =
            serde_json::from_slice(&bytes[8..8 + len]).expect("the base header parses");
        let data = &bytes[8 + len..];
        let mut metadata = None;
        let mut tensors = Vec::new();
        for (name, entry) in header {
            if name == "__metadata__" {
                metadata = Some(entry);
                continue;
            }
            let offsets = &entry["data_offsets"];
            let (begin, end) = (
                offsets[0].as_u64().expect("begin") as usize,
                offsets[1].as_u64().expect("end") as usize,
            );
            tensors.push(Tensor {
                name,
                dtype: entry["dtype"].as_str().expect("dtype").to_string(),
                shape: serde_json::from_value(entry["shape"].clone()).expect("shape"),
                data: data[begin..end].to_vec(),
            });
        }
        tensors.sort_by_key(|t| t.name.clone());
        Container { metadata, tensors }
    }

    /// The header object with offsets laid out back to back.
    fn header(&self) -> Map<String, Value> {
        let mut header = Map::new();
        if let Some(m) = &self.metadata {
            header.insert("__metadata__".into(), m.clone());
        }
        let mut at = 0;
        for t in &self.tensors {
            header.insert(
                t.name.clone(),
                json!({"dtype": t.dtype, "shape": t.shape, "data_offsets": [at, at + t.data.len()]}),
            );
            at += t.data.len();
        }
        header
    }

    fn bytes_with_header(&self, header: &Map<String, Value>) -> Vec<u8> {
        let mut text = serde_json::to_vec(header).expect("header serialises");
        // Padded to 8 bytes as common writers do.
        text.resize(text.len().div_ceil(8) * 8, b' ');
        let mut out = (text.len() as u64).to_le_bytes().to_vec();
        out.extend_from_slice(&text);
        for t in &self.tensors {
            out.extend_from_slice(&t.data);
        }
        out
    }

    fn bytes(&self) -> Vec<u8> {
        self.bytes_with_header(&self.header())
    }

    fn tensor(&mut self, name: &str) -> &mut Tensor {
        self.tensors
            .iter_mut()
            .find(|t| t.name == name)
            .unwrap_or_else(|| panic!("no tensor {name} in the base checkpoint"))
    }

    fn remove(&mut self, name: &str) {
        self.tensors.retain(|t| t.name != name);
    }
}

/// The base: 2 blocks, D 16, I 32, N 4, K 3, R 2, untied head, F32.
fn base(dir: &Path) -> Container {
    let spec = CheckpointSpec {
        d: 16,
        i: 32,
        n: 4,
        k: 3,
        r: 2,
        blocks: 2,
        tied: false,
        dtype: Dtype::F32,
        seed: 7,
    };
    let path = dir.join("base.safetensors");
    make_checkpoint(&spec, &path);
    Container::parse(&std::fs::read(&path).expect("base written"))
}

fn run(args: &[&std::ffi::OsStr]) -> Output {
    Command::new(inkling_binary())
        .args(args)
        .output()
        .expect("inkling starts")
}

/// `inkling convert` on `bytes` must fail cleanly with a message containing `named`.
fn refused(dir: &Path, case: &str, bytes: &[u8], named: &str) {
    let input = dir.join(format!("{case}.safetensors"));
    let out = dir.join(format!("{case}.inkl"));
    std::fs::write(&input, bytes).expect("case written");
    let output = run(&[
        "convert".as_ref(),
        input.as_os_str(),
        "-o".as_ref(),
        out.as_os_str(),
    ]);
    let stderr = String::from_utf8_lossy(&output.stderr);
    let code = output.status.code();
    assert_ne!(code, Some(101), "{case}: convert panicked:\n{stderr}");
    assert!(
        !output.status.success() && code.is_some(),
        "{case}: convert did not fail cleanly ({}):\n{stderr}",
        output.status
    );
    assert!(
        stderr.contains(named),
        "{case}: the message does not name `{named}`:\n{stderr}"
    );
    assert!(!stderr.contains("panicked"), "{case}:\n{stderr}");
    assert!(!out.exists(), "{case}: an output file was written");
}

fn set_f32(t: &mut Tensor, index: usize, value: f32) {
    assert_eq!(t.dtype, "F32");
    t.data[4 * index..4 * index + 4].copy_from_slice(&value.to_le_bytes());
}

#[test]
fn the_undamaged_base_converts() {
    let dir = tempfile::tempdir().expect("a temporary folder");
    let input = dir.path().join("again.safetensors");
    // Parsed and written back: the writer here is faithful, so the damage below is all
    // there is.
    std::fs::write(&input, base(dir.path()).bytes()).expect("written");
    let out = dir.path().join("again.inkl");
    let output = run(&[
        "convert".as_ref(),
        input.as_os_str(),
        "-o".as_ref(),
        out.as_os_str(),
    ]);
    assert!(
        output.status.success(),
        "{}",
        String::from_utf8_lossy(&output.stderr)
    );
}

#[test]
fn non_finite_values_are_named() {
    let dir = tempfile::tempdir().expect("a temporary folder");
    let base = base(dir.path());
    // IEEE 754: quiet NaN 0x7FC00000, infinities 0x7F800000 and 0xFF800000.
    for (case, name, index, value) in [
        ("nan", "blocks.0.expand", 5, f32::from_bits(0x7FC0_0000)),
        ("inf", "final_norm", 0, f32::from_bits(0x7F80_0000)),
        (
            "minus-inf",
            "blocks.1.decay",
            3,
            f32::from_bits(0xFF80_0000),
        ),
        ("nan-in-head", "head", 255 * 16 + 15, f32::NAN),
    ] {
        let mut c = base.clone();
        set_f32(c.tensor(name), index, value);
        refused(dir.path(), case, &c.bytes(), name);
    }
}

#[test]
fn missing_tensors_are_named() {
    let dir = tempfile::tempdir().expect("a temporary folder");
    let base = base(dir.path());
    for name in [
        "byte_embed",
        "blocks.0.conv_bias",
        "blocks.1.skip",
        "final_norm",
        "blocks.0.norm",
        // The last block's norm: the block count must not shrink to hide it.
        "blocks.1.norm",
    ] {
        let mut c = base.clone();
        c.remove(name);
        refused(dir.path(), &format!("missing-{name}"), &c.bytes(), name);
    }
}

#[test]
fn tensors_outside_the_schema_are_named() {
    let dir = tempfile::tempdir().expect("a temporary folder");
    let base = base(dir.path());
    for name in ["blocks.0.expand_bias", "blocks.5.expand"] {
        let mut c = base.clone();
        let mut extra = c.tensor("final_norm").clone();
        extra.name = name.to_string();
        c.tensors.push(extra);
        refused(dir.path(), &format!("extra-{name}"), &c.bytes(), name);
    }
}

#[test]
fn values_that_overflow_when_converted_are_named() {
    let dir = tempfile::tempdir().expect("a temporary folder");
    let mut c = base(dir.path());
    // decay = 100 is finite, but the image stores A = -exp(100), beyond f32 (max ≈ 3.4e38).
    set_f32(c.tensor("blocks.1.decay"), 2, 100.0);
    refused(dir.path(), "decay-overflow", &c.bytes(), "blocks.1.decay");
}

#[test]
fn misshaped_tensors_are_named() {
    let dir = tempfile::tempdir().expect("a temporary folder");
    let base = base(dir.path());
    // Same element count, other shape: [R + 2N, I] = [10, 32] stored as [32, 10].
    let mut c = base.clone();
    c.tensor("blocks.0.select").shape = vec![32, 10];
    refused(dir.path(), "transposed", &c.bytes(), "blocks.0.select");
    // One conv tap too few, data to match.
    let mut c = base.clone();
    let conv = c.tensor("blocks.1.conv");
    conv.shape = vec![32, 2];
    conv.data.truncate(32 * 2 * 4);
    refused(dir.path(), "short-conv", &c.bytes(), "blocks.1.conv");
    // A vector with a second axis that is not 1.
    let mut c = base.clone();
    let skip = c.tensor("blocks.0.skip");
    skip.shape = vec![16, 2];
    refused(dir.path(), "skip-matrix", &c.bytes(), "blocks.0.skip");
    // byte_embed with 255 rows.
    let mut c = base.clone();
    let embed = c.tensor("byte_embed");
    embed.shape = vec![255, 16];
    embed.data.truncate(255 * 16 * 4);
    refused(dir.path(), "embed-255", &c.bytes(), "byte_embed");
}

#[test]
fn wrong_dtypes_are_named() {
    let dir = tempfile::tempdir().expect("a temporary folder");
    let base = base(dir.path());
    // Valid safetensors dtypes of the same byte size that the reader does not take.
    for (case, dtype) in [("i32", "I32"), ("u32", "U32")] {
        let mut c = base.clone();
        c.tensor("blocks.0.step").dtype = dtype.into();
        refused(dir.path(), case, &c.bytes(), "blocks.0.step");
    }
    // F64: 8 bytes per element, data widened to match.
    let mut c = base.clone();
    let t = c.tensor("blocks.1.contract");
    t.dtype = "F64".into();
    t.data = t
        .data
        .chunks_exact(4)
        .flat_map(|b| f64::from(f32::from_le_bytes(b.try_into().expect("4 bytes"))).to_le_bytes())
        .collect();
    refused(dir.path(), "f64", &c.bytes(), "blocks.1.contract");
}

#[test]
fn container_faults_name_the_file() {
    let dir = tempfile::tempdir().expect("a temporary folder");
    let base = base(dir.path());
    let good = base.bytes();

    // data_offsets beyond the end of the file.
    let mut header = base.header();
    let last = base.tensors.last().expect("tensors").name.clone();
    let end = header[&last]["data_offsets"][1].as_u64().expect("end");
    header[&last]["data_offsets"] = json!([end - 64, end + 4096]);
    refused(
        dir.path(),
        "offsets-beyond",
        &base.bytes_with_header(&header),
        "offsets-beyond.safetensors",
    );

    // Offsets that overlap (two tensors claim the same bytes).
    let mut header = base.header();
    let first = base.tensors[0].name.clone();
    header[&first]["data_offsets"] = header[&base.tensors[1].name]["data_offsets"].clone();
    refused(
        dir.path(),
        "offsets-overlap",
        &base.bytes_with_header(&header),
        "offsets-overlap.safetensors",
    );

    // A header length larger than the file.
    let mut lying = good.clone();
    lying[..8].copy_from_slice(&(good.len() as u64 + 100).to_le_bytes());
    refused(
        dir.path(),
        "header-too-long",
        &lying,
        "header-too-long.safetensors",
    );

    // A header length of 2^64 - 1.
    let mut huge = good.clone();
    huge[..8].copy_from_slice(&u64::MAX.to_le_bytes());
    refused(dir.path(), "header-huge", &huge, "header-huge.safetensors");

    // Cut short inside the data, inside the header, inside the length.
    for (case, len) in [
        ("cut-data", good.len() - 10),
        ("cut-header", 40),
        ("cut-length", 5),
    ] {
        refused(
            dir.path(),
            case,
            &good[..len],
            &format!("{case}.safetensors"),
        );
    }

    // Not JSON; an unknown dtype; empty.
    let mut garbage = good.clone();
    garbage[8] = b'#';
    refused(dir.path(), "not-json", &garbage, "not-json.safetensors");
    let mut c = base.clone();
    c.tensor("blocks.0.norm").dtype = "F99".into();
    refused(
        dir.path(),
        "unknown-dtype",
        &c.bytes(),
        "unknown-dtype.safetensors",
    );
    refused(dir.path(), "empty", &[], "empty.safetensors");
}

/// Rewrites the trailing CRC-32 so that only the intended damage remains.
fn restamp(image: &mut [u8]) {
    let body = image.len() - CRC_LEN;
    let crc = crc32(&image[..body]);
    image[body..].copy_from_slice(&crc.to_le_bytes());
}

#[test]
fn inspect_names_a_wrong_version_or_checksum() {
    let dir = tempfile::tempdir().expect("a temporary folder");
    let image = inkling_core::image::example::tiny_image();
    let mut version = image;
    // Major version at byte 4 (the image format of the core, version 1).
    version[4..6].copy_from_slice(&2u16.to_le_bytes());
    restamp(&mut version);
    let mut checksum = image;
    checksum[1000] ^= 0x01;
    for (case, bytes, reason) in [
        ("version", &version, "version 2.0"),
        ("checksum", &checksum, "CRC-32"),
    ] {
        let path = dir.path().join(format!("{case}.inkl"));
        std::fs::write(&path, bytes).expect("written");
        for json in [false, true] {
            let mut args = vec!["inspect".as_ref(), path.as_os_str()];
            if json {
                args.push("--json".as_ref());
            }
            let output = run(&args);
            let stderr = String::from_utf8_lossy(&output.stderr);
            assert_ne!(
                output.status.code(),
                Some(101),
                "{case}: panicked:\n{stderr}"
            );
            assert!(!output.status.success(), "{case}: inspect accepted it");
            assert!(
                stderr.contains(reason) && stderr.contains(&format!("{case}.inkl")),
                "{case}: the message does not say `{reason}` about the file:\n{stderr}"
            );
            assert!(output.stdout.is_empty(), "{case}: printed a report");
        }
    }
}

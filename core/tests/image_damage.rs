//! Damaged images: every one is an error, never a panic.

use inkling_core::image::checksum::crc32;
use inkling_core::image::example::{tiny_image, tiny_tensors, TinyTensors, TINY_IMAGE_LEN};
use inkling_core::image::format::{Role, SourceLayout, CRC_LEN, HEADER_LEN, SOURCE_RECORD_LEN};
use inkling_core::image::writer::{write_image, Payload, TensorSource};
use inkling_core::{Error, Model};
use proptest::prelude::*;

/// Rewrites the trailing CRC so that a change inside the image reaches the structural checks.
fn restamp(image: &mut [u8]) {
    let body = image.len() - CRC_LEN;
    let crc = crc32(&image[..body]);
    image[body..].copy_from_slice(&crc.to_le_bytes());
}

#[test]
fn truncated_at_every_length_is_an_error() {
    let image = tiny_image();
    for len in 0..image.len() {
        let err = Model::from_bytes(&image[..len]).unwrap_err();
        assert!(
            matches!(err, Error::Truncated { .. } | Error::BadMagic),
            "length {len}: {err}"
        );
    }
}

#[test]
fn every_flipped_byte_is_an_error() {
    let image = tiny_image();
    for at in 0..image.len() {
        let mut damaged = image;
        damaged[at] ^= 0xA5;
        assert!(
            Model::from_bytes(&damaged).is_err(),
            "flip at byte {at} accepted"
        );
    }
}

#[test]
fn wrong_major_version_is_named() {
    let mut image = tiny_image();
    image[4] = 2;
    restamp(&mut image);
    assert_eq!(
        Model::from_bytes(&image).unwrap_err(),
        Error::UnsupportedVersion { major: 2, minor: 0 }
    );
    // A newer minor version of the same major is read: minor versions from 1 on carry the
    // source record, and later ones only add what this reader may ignore.
    let mut image = image_with_source_record();
    image[6] = 7;
    restamp(&mut image);
    assert_eq!(Model::from_bytes(&image).unwrap().version(), (1, 7));
    // Minor version 1 or later without the record is refused, naming the record.
    let mut image = tiny_image();
    image[6] = 7;
    restamp(&mut image);
    assert!(matches!(
        Model::from_bytes(&image),
        Err(Error::BadHeader {
            field: "source record",
            ..
        })
    ));
}

/// The tiny example image written with a source record (minor version 1).
fn image_with_source_record() -> Vec<u8> {
    struct FromReference(TinyTensors);
    impl TensorSource for FromReference {
        fn payload(&self, role: Role, block: usize) -> Payload<'_> {
            self.0.payload(role, block)
        }
        fn source_layout(&self) -> Option<SourceLayout> {
            Some(SourceLayout::ReferenceCode)
        }
    }
    let (dims, tensors) = tiny_tensors();
    let mut out = vec![0u8; TINY_IMAGE_LEN + SOURCE_RECORD_LEN];
    let len = write_image(&dims, &FromReference(tensors), &mut out).unwrap();
    out.truncate(len);
    assert_eq!(Model::from_bytes(&out).unwrap().version(), (1, 1));
    out
}

#[test]
fn bad_checksum_is_named() {
    let mut image = tiny_image();
    image[HEADER_LEN + 100] ^= 1;
    assert!(matches!(
        Model::from_bytes(&image),
        Err(Error::BadChecksum { .. })
    ));
}

#[test]
fn dimensions_that_overflow_are_rejected() {
    for (at, value) in [
        (12usize, u32::MAX),
        (16, 1 << 31),
        (20, 0),
        (24, 0),
        (32, 100_000),
        (44, u32::MAX),
    ] {
        let mut image = tiny_image();
        image[at..at + 4].copy_from_slice(&value.to_le_bytes());
        restamp(&mut image);
        let err = Model::from_bytes(&image).unwrap_err();
        assert!(
            matches!(err, Error::BadHeader { offset, .. } if offset == at),
            "{err}"
        );
    }
}

#[test]
fn tensor_offsets_outside_the_image_are_rejected() {
    let mut image = tiny_image();
    // Entry 0's payload offset (byte 16 of the entry) pointing past the end.
    let at = HEADER_LEN + 16;
    image[at..at + 4].copy_from_slice(&0xFFFF_FFF0u32.to_le_bytes());
    restamp(&mut image);
    assert!(matches!(
        Model::from_bytes(&image),
        Err(Error::BadTensor { index: 0, .. })
    ));
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(2000))]

    /// Any bytes at all: an error or a model, never a panic.
    #[test]
    fn arbitrary_bytes_never_panic(bytes in proptest::collection::vec(any::<u8>(), 0..600)) {
        let _ = Model::from_bytes(&bytes);
    }

    /// Changes behind a valid checksum still never panic, and a model that loads still runs.
    #[test]
    fn hostile_contents_with_valid_checksum(edits in proptest::collection::vec((0usize..4948, any::<u8>()), 1..8)) {
        let mut image = tiny_image();
        for (at, v) in edits {
            image[at % (image.len() - CRC_LEN)] = v;
        }
        restamp(&mut image);
        if let Ok(model) = Model::from_bytes(&image) {
            let mut buffers = inkling_core::EngineBuffers::<4096, 4096, 1024>::new();
            if let Ok(mut engine) = inkling_core::Engine::new(model, &mut buffers) {
                for &b in b"ok" {
                    engine.step(b);
                }
            }
        }
    }
}

//! The image's float encodings read as the standards define them.

use inkling_core::image::views::Floats;

/// Reads one binary16 bit pattern through the image's f16 view.
fn f16_value(bits: u16) -> f32 {
    let bytes = bits.to_le_bytes();
    Floats::F16Le(&bytes).get(0)
}

#[test]
fn binary16_values_from_ieee_754() {
    // IEEE 754-2008, binary16: 1 sign bit, 5 exponent bits (bias 15), 10 fraction bits.
    assert_eq!(f16_value(0x3C00), 1.0);
    assert_eq!(f16_value(0x7BFF), 65504.0); // largest finite
    assert_eq!(f16_value(0x0400), 2f32.powi(-14)); // smallest normal
    assert_eq!(f16_value(0x0001), 2f32.powi(-24)); // smallest subnormal
    assert_eq!(f16_value(0x1400), 2f32.powi(-10)); // epsilon
    assert_eq!(f16_value(0xC000), -2.0);
    assert_eq!(f16_value(0x7C00), f32::INFINITY);
    assert!(f16_value(0x7E00).is_nan());
}

#[test]
fn binary32_is_little_endian() {
    // IEEE 754-2008 binary32: 1.0 = 0x3F800000, stored least significant byte first.
    let bytes = [0x00, 0x00, 0x80, 0x3F, 0x00, 0x00, 0x20, 0xC1];
    let v = Floats::F32Le(&bytes);
    assert_eq!((v.get(0), v.get(1)), (1.0, -10.0));
    assert_eq!(v.get(2), 0.0, "past the end reads as zero, never panics");
}

//! CRC-32/ISO-HDLC, the checksum that closes every image.

/// The CRC used by images: CRC-32/ISO-HDLC (polynomial 0x04C11DB7, reflected, init and
/// xorout 0xFFFFFFFF), as catalogued in the CRC RevEng catalogue.
const IMAGE_CRC: crc::Crc<u32> = crc::Crc::<u32>::new(&crc::CRC_32_ISO_HDLC);

/// CRC-32/ISO-HDLC of `bytes`.
///
/// ```
/// // Check value from the CRC RevEng catalogue.
/// assert_eq!(inkling_core::image::checksum::crc32(b"123456789"), 0xCBF4_3926);
/// ```
pub fn crc32(bytes: &[u8]) -> u32 {
    IMAGE_CRC.checksum(bytes)
}

#[cfg(test)]
mod tests {
    use super::crc32;

    #[test]
    fn catalogue_check_value() {
        // CRC RevEng catalogue, CRC-32/ISO-HDLC: check = 0xCBF43926.
        assert_eq!(crc32(b"123456789"), 0xCBF4_3926);
    }

    #[test]
    fn catalogue_residue() {
        // CRC RevEng catalogue, CRC-32/ISO-HDLC: residue 0xDEBB20E3 — the register after a
        // message followed by its own CRC (little-endian), before the final xor.
        let mut msg = [0u8; 13];
        msg[..9].copy_from_slice(b"123456789");
        msg[9..].copy_from_slice(&crc32(b"123456789").to_le_bytes());
        assert_eq!(crc32(&msg) ^ 0xFFFF_FFFF, 0xDEBB_20E3);
    }
}

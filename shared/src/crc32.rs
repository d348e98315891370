//! CRC-32/ISO-HDLC (the CRC of IEEE 802.3, zlib and PNG): polynomial 0x04C11DB7 reflected
//! (0xEDB88320), initial value 0xFFFFFFFF, reflected input and output, final XOR 0xFFFFFFFF.
//! Its catalogued check value — the CRC of the ASCII string "123456789" — is 0xCBF43926.

const fn make_table() -> [u32; 256] {
    let mut table = [0u32; 256];
    let mut i = 0;
    while i < 256 {
        let mut crc = i as u32;
        let mut bit = 0;
        while bit < 8 {
            crc = if crc & 1 != 0 {
                (crc >> 1) ^ 0xEDB8_8320
            } else {
                crc >> 1
            };
            bit += 1;
        }
        table[i] = crc;
        i += 1;
    }
    table
}

static TABLE: [u32; 256] = make_table();

/// CRC-32/ISO-HDLC of `bytes`.
pub fn crc32(bytes: &[u8]) -> u32 {
    let mut crc = 0xFFFF_FFFFu32;
    for &b in bytes {
        crc = (crc >> 8) ^ TABLE[((crc ^ u32::from(b)) & 0xFF) as usize];
    }
    crc ^ 0xFFFF_FFFF
}

/// 64-bit FNV-1a of `bytes` (offset basis 0xcbf29ce484222325, prime 0x100000001b3): the model id.
pub fn fnv1a64(bytes: &[u8]) -> u64 {
    let mut hash = 0xcbf2_9ce4_8422_2325u64;
    for &b in bytes {
        hash ^= u64::from(b);
        hash = hash.wrapping_mul(0x0000_0100_0000_01b3);
    }
    hash
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Check value of CRC-32/ISO-HDLC from the catalogue of parametrised CRC algorithms
    /// (reveng.sourceforge.io, "CRC-32/ISO-HDLC": check=0xcbf43926).
    #[test]
    fn crc32_check_value() {
        assert_eq!(crc32(b"123456789"), 0xCBF4_3926);
        assert_eq!(crc32(b""), 0);
    }

    /// FNV-1a 64 test vectors from the FNV reference (isthe.com/chongo/tech/comp/fnv, test
    /// suite): "" → 0xcbf29ce484222325, "a" → 0xaf63dc4c8601ec8c, "foobar" → 0x85944171f73967e8.
    #[test]
    fn fnv1a64_test_vectors() {
        assert_eq!(fnv1a64(b""), 0xcbf2_9ce4_8422_2325);
        assert_eq!(fnv1a64(b"a"), 0xaf63_dc4c_8601_ec8c);
        assert_eq!(fnv1a64(b"foobar"), 0x8594_4171_f739_67e8);
    }
}

//! CRC-16/CCITT-FALSE: width 16, poly 0x1021, init 0xFFFF, no reflection, xorout 0.

/// One table entry per byte value, built at compile time from the bit-wise definition.
const TABLE: [u16; 256] = build_table();

const fn build_table() -> [u16; 256] {
    let mut table = [0u16; 256];
    let mut index = 0;
    while index < 256 {
        let mut crc = (index as u16) << 8;
        let mut bit = 0;
        while bit < 8 {
            crc = if crc & 0x8000 != 0 {
                (crc << 1) ^ 0x1021
            } else {
                crc << 1
            };
            bit += 1;
        }
        table[index] = crc;
        index += 1;
    }
    table
}

/// CRC-16/CCITT-FALSE of `bytes` (poly 0x1021, init 0xFFFF, not reflected, xorout 0);
/// the check value of every protocol line (`PROTOCOL.md` §2).
///
/// # Example
/// ```
/// assert_eq!(armwright_link::crc16_ccitt_false(b"123456789"), 0x29B1);
/// ```
pub fn crc16_ccitt_false(bytes: &[u8]) -> u16 {
    bytes.iter().fold(0xFFFF_u16, |crc, &byte| {
        (crc << 8) ^ TABLE[usize::from((crc >> 8) as u8 ^ byte)]
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The bit-wise definition, straight from the parameters, to check the table against.
    fn bitwise(bytes: &[u8]) -> u16 {
        let mut crc = 0xFFFF_u16;
        for &byte in bytes {
            crc ^= u16::from(byte) << 8;
            for _ in 0..8 {
                crc = if crc & 0x8000 != 0 {
                    (crc << 1) ^ 0x1021
                } else {
                    crc << 1
                };
            }
        }
        crc
    }

    #[test]
    fn check_value_matches_the_catalogue() {
        // Catalogue of parametrised CRC algorithms, entry CRC-16/IBM-3740
        // (alias CRC-16/CCITT-FALSE): width=16 poly=0x1021 init=0xffff refin=false
        // refout=false xorout=0x0000 check=0x29b1.
        assert_eq!(crc16_ccitt_false(b"123456789"), 0x29B1);
    }

    #[test]
    fn empty_input_gives_the_initial_value() {
        // With no bytes nothing is shifted in and xorout is 0, so the result is init (0xFFFF).
        assert_eq!(crc16_ccitt_false(b""), 0xFFFF);
    }

    #[test]
    fn table_agrees_with_the_bitwise_definition() {
        let samples: [&[u8]; 4] = [b"s01:05DC", b"x05", b"\x00\xff\x7e", b"A00:00,4,ok"];
        for sample in samples {
            assert_eq!(crc16_ccitt_false(sample), bitwise(sample));
        }
    }
}

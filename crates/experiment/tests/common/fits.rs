//! Reading FITS files just far enough to compare their pixels.

/// The data unit of a FITS file: everything after the primary header, which is 2880-byte
/// blocks of 80-character cards ending with the `END` card (FITS Standard 4.0, §3.3 and §4.1).
pub fn fits_data_unit(bytes: &[u8]) -> &[u8] {
    let mut block = 0;
    while (block + 1) * 2880 <= bytes.len() {
        let header = &bytes[block * 2880..(block + 1) * 2880];
        block += 1;
        if header
            .chunks(80)
            .any(|card| card.starts_with(b"END") && card[3..].iter().all(|&c| c == b' '))
        {
            return &bytes[block * 2880..];
        }
    }
    panic!("no END card in the FITS header")
}

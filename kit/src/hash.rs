//! Content hashes for provenance stamps.

use sha2::{Digest, Sha256};

/// Lower-case hexadecimal SHA-256 of `bytes` (FIPS 180-4).
pub fn sha256_hex(bytes: &[u8]) -> String {
    Sha256::digest(bytes).iter().map(|b| format!("{b:02x}")).collect()
}

#[cfg(test)]
mod tests {
    #[test]
    fn known_digests() {
        // FIPS 180-2, appendix B.1 ("abc") and the digest of the empty message (common practice).
        assert_eq!(
            super::sha256_hex(b"abc"),
            "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"
        );
        assert_eq!(
            super::sha256_hex(b""),
            "e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855"
        );
    }
}

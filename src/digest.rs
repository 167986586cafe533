//! SHA-256 as lowercase hex: the one spelling of a hash in every manifest,
//! cache key and shard assignment.

use sha2::{Digest, Sha256};

/// Lowercase hex of a finished digest.
pub(crate) fn hex(digest: impl AsRef<[u8]>) -> String {
    use std::fmt::Write;
    let bytes = digest.as_ref();
    let mut out = String::with_capacity(bytes.len() * 2);
    for b in bytes {
        let _ = write!(out, "{b:02x}");
    }
    out
}

/// SHA-256 of `bytes`, as lowercase hex.
pub(crate) fn sha256_hex(bytes: &[u8]) -> String {
    hex(Sha256::digest(bytes))
}

/// SHA-256 (hex) and length of a file, read in blocks.
pub(crate) fn file_sha256(path: &std::path::Path) -> std::io::Result<(String, u64)> {
    let mut file = std::fs::File::open(path)?;
    let mut hash = Sha256::new();
    let bytes = std::io::copy(&mut file, &mut hash)?;
    Ok((hex(hash.finalize()), bytes))
}

#[cfg(test)]
mod tests {
    #[test]
    fn known_digests() {
        // FIPS 180-2, appendix B.1 ("abc") and the empty string (published test vectors).
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

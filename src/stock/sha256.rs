//! SHA-256 (NIST FIPS 180-4), to tell whether an inventory file changed between reading it
//! and writing it back. A content hash, not a security boundary; the arithmetic is the
//! maintained `sha2` crate's, this module only fixes the form the binary prints.

use sha2::{Digest, Sha256};

/// The SHA-256 of `data`.
pub fn digest(data: &[u8]) -> [u8; 32] {
    Sha256::digest(data).into()
}

/// The SHA-256 of `data` as 64 lowercase hex digits (the form `sha256sum` prints).
pub fn hex_digest(data: &[u8]) -> String {
    digest(data).iter().map(|b| format!("{b:02x}")).collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    // NIST FIPS 180-4 test vectors for SHA-256, as published in the CSRC "Cryptographic
    // Standards and Guidelines: Examples with Intermediate Values" (SHA256.pdf): the one-block
    // message "abc", the two-block 448-bit message, and one million "a" (from memory; each
    // also checked with GNU coreutils `sha256sum`).

    #[test]
    fn nist_fips_180_4_one_block_abc() {
        assert_eq!(
            hex_digest(b"abc"),
            "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"
        );
    }

    #[test]
    fn nist_fips_180_4_two_block_message() {
        assert_eq!(
            hex_digest(b"abcdbcdecdefdefgefghfghighijhijkijkljklmklmnlmnomnopnopq"),
            "248d6a61d20638b8e5c026930c3e6039a33ce45964ff2167f6ecedd419db06c1"
        );
    }

    #[test]
    fn nist_million_a() {
        assert_eq!(
            hex_digest(&vec![b'a'; 1_000_000]),
            "cdc76e5c9914fb9281a1c7e284d73e67f1809a48a497200e046d39ccc7112cd0"
        );
    }

    #[test]
    fn empty_message() {
        // `printf '' | sha256sum`.
        assert_eq!(
            hex_digest(b""),
            "e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855"
        );
    }
}

//! Cache keys: everything that determines an entry written as one canonical
//! byte string, and its SHA-256 (FIPS 180-4) as the entry's name.
//!
//! The byte string is a sequence of fields, each its name, a type tag and
//! its value with its length: a `u32` LE length and the bytes, numbers as
//! `u64` LE, reals as the IEEE 754 bits of an `f64` LE (so −0 and 0 differ,
//! and two values that print alike do not collide). It always starts with
//! the program's name and version, the entry format version and the kind
//! of entry, so an entry never outlives the code that wrote it.

use super::store::FORMAT_VERSION;
use sha2::{Digest, Sha256};

/// What an entry holds.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
#[repr(u32)]
pub enum Kind {
    /// A separation table (RGB → CMYK nodes).
    Table = 1,
    /// The ICC output profile embedded in composites.
    Profile = 2,
    /// The CMYK → CMYK re-separation table.
    Reseparation = 3,
    /// The picture-independent base of the tables of a source under
    /// perceptual compression from the picture
    /// ([`crate::separation::TableBase`]).
    TableBase = 4,
    /// The boundary of the printable gamut of a separator
    /// ([`crate::separation::GamutBoundary`]).
    Boundary = 5,
    /// A printing condition fitted on load from a measurement file, as the
    /// condition file `platesmith fit` writes.
    FittedCondition = 6,
}

impl Kind {
    pub(super) fn file_prefix(self) -> &'static str {
        match self {
            Kind::Table => "table",
            Kind::Profile => "profile",
            Kind::Reseparation => "cmyk-table",
            Kind::TableBase => "table-base",
            Kind::Boundary => "press-gamut",
            Kind::FittedCondition => "fitted-condition",
        }
    }

    fn tag(self) -> &'static str {
        self.file_prefix()
    }
}

/// The canonical bytes of a key being assembled.
#[derive(Debug, Clone)]
pub struct KeyBytes {
    kind: Kind,
    bytes: Vec<u8>,
}

impl KeyBytes {
    /// A key of `kind` for this program version, build (the digest of its
    /// sources) and entry format.
    pub fn new(kind: Kind) -> KeyBytes {
        let mut k = KeyBytes { kind, bytes: Vec::new() };
        k.text("program", env!("CARGO_PKG_NAME"));
        k.text("version", env!("CARGO_PKG_VERSION"));
        // Every change to the program's sources or libraries (build.rs).
        k.text("sources", env!("PLATESMITH_SOURCE_DIGEST"));
        k.number("format", FORMAT_VERSION as u64);
        k.text("kind", kind.tag());
        k
    }

    /// Fields without the program and kind prefix, to nest in a key with [`KeyBytes::bytes`].
    pub fn bare(kind: Kind) -> KeyBytes {
        KeyBytes { kind, bytes: Vec::new() }
    }

    fn field(&mut self, name: &str, tag: u8, value: &[u8]) {
        for part in [name.as_bytes(), value] {
            self.bytes.extend((part.len() as u32).to_le_bytes());
            self.bytes.extend(part);
        }
        self.bytes.push(tag);
    }

    pub fn text(&mut self, name: &str, value: &str) {
        self.field(name, b's', value.as_bytes());
    }

    pub fn bytes(&mut self, name: &str, value: &[u8]) {
        self.field(name, b'b', value);
    }

    pub fn number(&mut self, name: &str, value: u64) {
        self.field(name, b'u', &value.to_le_bytes());
    }

    pub fn flag(&mut self, name: &str, value: bool) {
        self.field(name, b'?', &[value as u8]);
    }

    pub fn reals(&mut self, name: &str, values: &[f64]) {
        let bytes: Vec<u8> = values.iter().flat_map(|v| v.to_bits().to_le_bytes()).collect();
        self.field(name, b'f', &bytes);
    }

    /// The canonical bytes so far.
    pub fn as_bytes(&self) -> &[u8] {
        &self.bytes
    }

    pub fn finish(&self) -> Key {
        Key {
            kind: self.kind,
            digest: Sha256::digest(&self.bytes).into(),
        }
    }
}

/// The name of one entry: its kind and the SHA-256 of its key bytes.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub struct Key {
    kind: Kind,
    digest: [u8; 32],
}

impl Key {
    pub fn kind(&self) -> Kind {
        self.kind
    }

    pub fn digest(&self) -> &[u8; 32] {
        &self.digest
    }

    /// The digest in lowercase hexadecimal.
    pub fn hex(&self) -> String {
        self.digest.iter().map(|b| format!("{b:02x}")).collect()
    }

    /// The first 12 hexadecimal digits, as notes name an entry.
    pub fn short(&self) -> String {
        self.hex()[..12].to_string()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// FIPS 180-4 example "abc" (NIST CSRC example values): the hash is SHA-256.
    #[test]
    fn the_digest_is_sha256() {
        assert_eq!(
            Sha256::digest(b"abc").iter().map(|b| format!("{b:02x}")).collect::<String>(),
            "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"
        );
    }

    #[test]
    fn fields_cannot_run_into_each_other() {
        let key = |a: &str, b: &str| {
            let mut k = KeyBytes::new(Kind::Table);
            k.text("a", a);
            k.text("b", b);
            k.finish()
        };
        assert_ne!(key("ab", "c"), key("a", "bc"));
        let mut zero = KeyBytes::new(Kind::Table);
        zero.reals("x", &[0.0]);
        let mut negative_zero = KeyBytes::new(Kind::Table);
        negative_zero.reals("x", &[-0.0]);
        assert_ne!(zero.finish(), negative_zero.finish());
        assert_ne!(KeyBytes::new(Kind::Table).finish(), KeyBytes::new(Kind::Profile).finish());
    }
}

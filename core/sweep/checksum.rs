//! The running checksum of what the sweep writer writes.

/// A running checksum of 64-bit words (what the writer writes, in order),
/// to tell whether an unfinished file reads back as it was written. Each
/// word is folded in as `h = rotl((h ^ w) · p, 31)` with the 64-bit FNV
/// prime p (Fowler–Noll–Vo hash, applied per word instead of per byte, and
/// rotated: common practice for a fast non-cryptographic check). Each step
/// is a bijection of `h`, so a single changed word always changes the sum.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) struct Checksum(pub u64);

impl Checksum {
    /// The FNV-1 64-bit offset basis.
    pub(super) const START: u64 = 0xcbf2_9ce4_8422_2325;
    /// The FNV 64-bit prime.
    pub(super) const PRIME: u64 = 0x0000_0100_0000_01b3;

    pub(super) fn new() -> Checksum {
        Checksum(Checksum::START)
    }

    pub(super) fn word(&mut self, w: u64) {
        self.0 = (self.0 ^ w).wrapping_mul(Checksum::PRIME).rotate_left(31);
    }

    pub(super) fn f64s(&mut self, values: &[f64]) {
        self.word(values.len() as u64);
        for v in values {
            self.word(v.to_bits());
        }
    }

    pub(super) fn i64s(&mut self, values: &[i64]) {
        self.word(values.len() as u64);
        for &v in values {
            self.word(v as u64);
        }
    }

    pub(super) fn text(&mut self, text: &str) {
        let bytes = text.as_bytes();
        self.word(bytes.len() as u64);
        for chunk in bytes.chunks(8) {
            let mut word = [0u8; 8];
            word[..chunk.len()].copy_from_slice(chunk);
            self.word(u64::from_le_bytes(word));
        }
    }

    pub(super) fn texts<S: AsRef<str>>(&mut self, texts: &[S]) {
        self.word(texts.len() as u64);
        for t in texts {
            self.text(t.as_ref());
        }
    }
}

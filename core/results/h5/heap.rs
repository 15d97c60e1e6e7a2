//! A check of the HDF5 global heap collections of a file before the HDF5
//! library reads any text from it.
//!
//! Variable-length strings (every text in yawdyn's files) live in global
//! heap collections. The HDF5 library (1.10) trusts the sizes recorded
//! there: a damaged object size makes it copy past its buffer (a crash) or
//! loop for ever on a zeroed collection. This module walks every collection
//! of the file the way the format describes it and refuses the file when
//! one does not add up.
//!
//! Layout (HDF5 File Format Specification, version 3.0, section III.E
//! "Global Heap"): a collection is the signature `GCOL`, version 1, three
//! reserved bytes and the collection size (8 bytes, little-endian, with the
//! default 8-byte lengths), then objects, each with a 2-byte index (0 marks
//! the free space, which fills the rest of the collection), a 2-byte
//! reference count, 4 reserved bytes, an 8-byte object size and the data
//! padded to a multiple of 8 bytes. A collection is at least 4096 bytes.

use std::collections::HashSet;
use std::io::Read;
use std::path::{Path, PathBuf};
use std::sync::Mutex;

/// Files already found sound in this process (sweep readers reopen a file
/// per case).
static CHECKED: Mutex<Vec<PathBuf>> = Mutex::new(Vec::new());

/// Smallest collection the format allows, bytes.
const MIN_COLLECTION: u64 = 4096;

/// Size of a collection header and of an object header, bytes.
const HEADER: u64 = 16;

/// Checks every global heap collection of the file `path`. Returns the
/// reason when one is damaged. A file that cannot be read is left to the
/// HDF5 library to report.
pub(crate) fn check_global_heaps(path: &Path) -> Result<(), String> {
    if CHECKED
        .lock()
        .unwrap_or_else(|e| e.into_inner())
        .iter()
        .any(|p| p == path)
    {
        return Ok(());
    }
    let mut bytes = Vec::new();
    let read = std::fs::File::open(path).and_then(|f| f.take(u64::MAX).read_to_end(&mut bytes));
    if read.is_err() {
        return Ok(());
    }
    check_bytes(&bytes)?;
    CHECKED
        .lock()
        .unwrap_or_else(|e| e.into_inner())
        .push(path.to_path_buf());
    Ok(())
}

/// [`check_global_heaps`] on the file's bytes.
fn check_bytes(bytes: &[u8]) -> Result<(), String> {
    let len = bytes.len() as u64;
    let mut at = 0;
    while let Some(found) = find(&bytes[at..], b"GCOL") {
        let start = at + found;
        at = start + 1;
        let header = &bytes[start..bytes.len().min(start + HEADER as usize)];
        // Only a real collection header (version 1, reserved bytes zero);
        // the same four letters inside data are not one.
        if header.len() < HEADER as usize || header[4] != 1 || header[5..8] != [0, 0, 0] {
            continue;
        }
        let size = u64::from_le_bytes(header[8..16].try_into().unwrap_or_default());
        let place = format!("global heap collection at byte {start}");
        if size < MIN_COLLECTION || start as u64 + size > len {
            return Err(format!(
                "{place} claims {size} bytes (the file has {len}, a collection at least {MIN_COLLECTION})"
            ));
        }
        check_collection(&bytes[start..start + size as usize])
            .map_err(|why| format!("{place}: {why}"))?;
    }
    Ok(())
}

/// Walks the objects of one collection (`collection` starts at `GCOL`).
fn check_collection(collection: &[u8]) -> Result<(), String> {
    let end = collection.len() as u64;
    let mut pos = HEADER;
    let mut seen = HashSet::new();
    while pos + HEADER <= end {
        let h = &collection[pos as usize..(pos + HEADER) as usize];
        let index = u16::from_le_bytes([h[0], h[1]]);
        let size = u64::from_le_bytes(h[8..16].try_into().unwrap_or_default());
        if index == 0 {
            // The free space fills the rest of the collection.
            if size != end - pos {
                return Err(format!(
                    "free space of {size} bytes at offset {pos} where {} remain",
                    end - pos
                ));
            }
            return Ok(());
        }
        if !seen.insert(index) {
            return Err(format!("object {index} appears twice"));
        }
        let padded = size.div_ceil(8).saturating_mul(8);
        let next = pos.saturating_add(HEADER).saturating_add(padded);
        if next > end {
            return Err(format!(
                "object {index} of {size} bytes at offset {pos} runs past the collection's end ({end})"
            ));
        }
        pos = next;
    }
    Ok(())
}

/// The first position of `needle` in `haystack`.
fn find(haystack: &[u8], needle: &[u8]) -> Option<usize> {
    haystack.windows(needle.len()).position(|w| w == needle)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A collection of 4096 bytes with two objects (3 and 0 bytes) and the
    /// free space.
    fn collection() -> Vec<u8> {
        let mut c = b"GCOL\x01\0\0\0".to_vec();
        c.extend(4096u64.to_le_bytes());
        for (index, data) in [(1u16, &b"abc"[..]), (2, &b""[..])] {
            c.extend(index.to_le_bytes());
            c.extend([0, 0, 0, 0, 0, 0]);
            c.extend((data.len() as u64).to_le_bytes());
            c.extend(data);
            c.resize(c.len().div_ceil(8) * 8, 0);
        }
        let free = 4096 - c.len() as u64;
        c.extend([0, 0, 0, 0, 0, 0, 0, 0]);
        c.extend(free.to_le_bytes());
        c.resize(4096, 0);
        c
    }

    #[test]
    fn a_sound_collection_passes_and_damaged_ones_are_named() {
        let good = collection();
        check_bytes(&good).unwrap();
        // An object size grown past the end.
        let mut bad = good.clone();
        bad[24] = 0xff;
        bad[30] = 0x01;
        assert!(check_bytes(&bad).unwrap_err().contains("runs past"));
        // A zeroed stretch: the objects read as free space of size 0.
        let mut zeroed = good.clone();
        zeroed[16..48].fill(0);
        assert!(check_bytes(&zeroed).unwrap_err().contains("free space"));
        // A collection larger than the file.
        assert!(check_bytes(&good[..2000]).is_err());
        // The letters inside data, without a header, are ignored.
        check_bytes(b"xxGCOLxx").unwrap();
    }
}

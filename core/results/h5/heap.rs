//! A check of the HDF5 global heap collections of a file before the HDF5
//! library reads any text from it, and of every reference into them that
//! the library is about to follow.
//!
//! Variable-length strings (every text in yawdyn's files) live in global
//! heap collections. The HDF5 library (1.10) trusts the sizes recorded
//! there: a damaged object size makes it copy past its buffer (a crash) or
//! loop for ever on a zeroed collection. This module walks every collection
//! of the file the way the format describes it and refuses the file when
//! one does not add up. It keeps what it found ([`HeapIndex`]): the library
//! also trusts the references to heap objects stored in attributes and
//! datasets (a damaged collection address or object index makes it read
//! out of bounds), so [`HeapIndex::check_ids`] checks those against the
//! collections before any text is read (`header.rs` finds their bytes).
//!
//! Layout (HDF5 File Format Specification, version 3.0, section III.E
//! "Global Heap"): a collection is the signature `GCOL`, version 1, three
//! reserved bytes and the collection size (a length: 8 bytes, little-endian,
//! with the default sizes), then objects, each with a 2-byte index (0 marks
//! the free space, which fills the rest of the collection), a 2-byte
//! reference count, 4 reserved bytes, the object size (a length) and the
//! data padded to a multiple of 8 bytes. A collection is at least 4096
//! bytes. The sizes of lengths and addresses and the base address come from
//! the superblock (section II.A).

use std::collections::HashMap;
use std::io::Read;
use std::path::{Path, PathBuf};
use std::sync::{Arc, Mutex};
use std::time::SystemTime;

/// Files already found sound in this process (sweep readers reopen a file
/// per case), with what was found in them. A file is known again by its
/// path, length, modification time and inode (an output written under the
/// same path is another file).
static CHECKED: Mutex<Vec<(Stamp, Arc<HeapIndex>)>> = Mutex::new(Vec::new());

/// What tells a file seen before from another one at the same path.
#[derive(Debug, Clone, PartialEq, Eq)]
struct Stamp {
    path: PathBuf,
    len: u64,
    modified: Option<SystemTime>,
    inode: u64,
}

impl Stamp {
    fn of(path: &Path) -> Option<Stamp> {
        use std::os::unix::fs::MetadataExt;
        let meta = std::fs::metadata(path).ok()?;
        Some(Stamp {
            path: path.to_path_buf(),
            len: meta.len(),
            modified: meta.modified().ok(),
            inode: meta.ino(),
        })
    }
}

/// Smallest collection the format allows, bytes.
const MIN_COLLECTION: u64 = 4096;

/// The HDF5 signature that starts a superblock (format specification,
/// section II.A).
const SIGNATURE: &[u8; 8] = b"\x89HDF\r\n\x1a\n";

/// The global heap collections of a file and the superblock facts needed
/// to follow a reference into them.
#[derive(Debug)]
pub(crate) struct HeapIndex {
    /// Position in the file that its addresses count from, bytes.
    pub(crate) base: u64,
    /// Size of an address in the file, bytes.
    pub(crate) offset_size: usize,
    /// Size of a length in the file, bytes.
    pub(crate) length_size: usize,
    /// Length of the file, bytes.
    pub(crate) file_len: u64,
    /// Objects of each collection (by its position in the file): index →
    /// size in bytes.
    collections: HashMap<u64, HashMap<u16, u64>>,
}

/// Checks every global heap collection of the file `path`. Returns the
/// reason when one is damaged. A file that cannot be read is left to the
/// HDF5 library to report.
pub(crate) fn check_global_heaps(path: &Path) -> Result<(), String> {
    heap_index(path).map(|_| ())
}

/// The [`HeapIndex`] of the file `path` after [`check_global_heaps`];
/// `None` when the file cannot be read or has no superblock (the HDF5
/// library reports that when it opens the file).
pub(crate) fn heap_index(path: &Path) -> Result<Option<Arc<HeapIndex>>, String> {
    let Some(stamp) = Stamp::of(path) else {
        return Ok(None);
    };
    let known = CHECKED
        .lock()
        .unwrap_or_else(|e| e.into_inner())
        .iter()
        .find(|(s, _)| *s == stamp)
        .map(|(_, index)| Arc::clone(index));
    if known.is_some() {
        return Ok(known);
    }
    let mut bytes = Vec::new();
    let read = std::fs::File::open(path).and_then(|f| f.take(u64::MAX).read_to_end(&mut bytes));
    if read.is_err() {
        return Ok(None);
    }
    let Some(index) = index_bytes(&bytes)? else {
        return Ok(None);
    };
    let index = Arc::new(index);
    CHECKED
        .lock()
        .unwrap_or_else(|e| e.into_inner())
        .push((stamp, Arc::clone(&index)));
    Ok(Some(index))
}

/// The superblock facts of `bytes`: base address, sizes of addresses and
/// lengths. The superblock is at byte 0, 512, 1024, 2048, … (format
/// specification, section II.A); versions 0 and 1 give the sizes at bytes
/// 13 and 14 and the base address at byte 24 (28 in version 1), versions 2
/// and 3 at bytes 9 and 10 and byte 12.
fn superblock(bytes: &[u8]) -> Option<(u64, usize, usize)> {
    let mut at = 0usize;
    while at + 8 <= bytes.len() {
        if &bytes[at..at + 8] == SIGNATURE {
            let b = &bytes[at..];
            let (offsets, lengths, base_at) = match b.get(8)? {
                0 => (*b.get(13)?, *b.get(14)?, 24),
                1 => (*b.get(13)?, *b.get(14)?, 28),
                2 | 3 => (*b.get(9)?, *b.get(10)?, 12),
                _ => return None,
            };
            let (offsets, lengths) = (usize::from(offsets), usize::from(lengths));
            if ![2, 4, 8].contains(&offsets) || ![2, 4, 8].contains(&lengths) {
                return None;
            }
            let base = read_uint(b.get(base_at..base_at + offsets)?);
            return Some((base, offsets, lengths));
        }
        at = if at == 0 { 512 } else { at * 2 };
    }
    None
}

/// The little-endian unsigned number in `bytes` (at most 8 of them).
pub(crate) fn read_uint(bytes: &[u8]) -> u64 {
    bytes
        .iter()
        .take(8)
        .rev()
        .fold(0, |n, &b| (n << 8) | u64::from(b))
}

/// [`check_global_heaps`] on the file's bytes; `None` without a superblock.
fn index_bytes(bytes: &[u8]) -> Result<Option<HeapIndex>, String> {
    let Some((base, offset_size, length_size)) = superblock(bytes) else {
        return Ok(None);
    };
    let collections = check_bytes(bytes, length_size)?;
    Ok(Some(HeapIndex {
        base,
        offset_size,
        length_size,
        file_len: bytes.len() as u64,
        collections,
    }))
}

/// Walks every collection of `bytes` (lengths of `length_size` bytes);
/// returns the objects of each.
fn check_bytes(
    bytes: &[u8],
    length_size: usize,
) -> Result<HashMap<u64, HashMap<u16, u64>>, String> {
    let header = 8 + length_size;
    let len = bytes.len() as u64;
    let mut at = 0;
    let mut found = HashMap::new();
    while let Some(offset) = find(&bytes[at..], b"GCOL") {
        let start = at + offset;
        at = start + 1;
        let head = &bytes[start..bytes.len().min(start + header)];
        // Only a real collection header (version 1, reserved bytes zero);
        // the same four letters inside data are not one.
        if head.len() < header || head[4] != 1 || head[5..8] != [0, 0, 0] {
            continue;
        }
        let size = read_uint(&head[8..header]);
        let place = format!("global heap collection at byte {start}");
        if size < MIN_COLLECTION || start as u64 + size > len {
            return Err(format!(
                "{place} claims {size} bytes (the file has {len}, a collection at least {MIN_COLLECTION})"
            ));
        }
        let objects = check_collection(&bytes[start..start + size as usize], length_size)
            .map_err(|why| format!("{place}: {why}"))?;
        found.insert(start as u64, objects);
    }
    Ok(found)
}

/// Walks the objects of one collection (`collection` starts at `GCOL`);
/// returns each object's size by index.
fn check_collection(collection: &[u8], length_size: usize) -> Result<HashMap<u16, u64>, String> {
    let header = 8 + length_size as u64;
    let end = collection.len() as u64;
    let mut pos = header;
    let mut seen = HashMap::new();
    while pos + header <= end {
        let h = &collection[pos as usize..(pos + header) as usize];
        let index = u16::from_le_bytes([h[0], h[1]]);
        let size = read_uint(&h[8..]);
        if index == 0 {
            // The free space fills the rest of the collection.
            if size != end - pos {
                return Err(format!(
                    "free space of {size} bytes at offset {pos} where {} remain",
                    end - pos
                ));
            }
            return Ok(seen);
        }
        if seen.insert(index, size).is_some() {
            return Err(format!("object {index} appears twice"));
        }
        let padded = size.div_ceil(8).saturating_mul(8);
        let next = pos.saturating_add(header).saturating_add(padded);
        if next > end {
            return Err(format!(
                "object {index} of {size} bytes at offset {pos} runs past the collection's end ({end})"
            ));
        }
        pos = next;
    }
    Ok(seen)
}

impl HeapIndex {
    /// Size of one stored variable-length element: its length (4 bytes),
    /// then the global heap ID, the collection's address and the object's
    /// index (4 bytes) (format specification, section III.E for the heap
    /// ID; the element's layout from memory of the library's encoding, and
    /// seen in every file the tests read).
    pub(crate) fn id_size(&self) -> usize {
        8 + self.offset_size
    }

    /// Checks the stored variable-length strings `bytes` (a whole number
    /// of heap IDs) before the library follows them: each refers to an
    /// object of a collection walked here whose size is the string's
    /// length, or to nothing with length 0 (address 0: an empty text).
    /// Returns the reason for the first that does not.
    pub(crate) fn check_ids(&self, bytes: &[u8]) -> Result<(), String> {
        let size = self.id_size();
        if bytes.len() % size != 0 {
            return Err(format!(
                "its {} stored bytes are not a whole number of {size}-byte text references",
                bytes.len()
            ));
        }
        for (element, id) in bytes.chunks_exact(size).enumerate() {
            let len = read_uint(&id[..4]);
            let address = read_uint(&id[4..4 + self.offset_size]);
            let index = read_uint(&id[4 + self.offset_size..]);
            let at = format!("text {element}");
            if address == 0 {
                if len != 0 {
                    return Err(format!(
                        "{at} claims {len} bytes but refers to no heap object"
                    ));
                }
                continue;
            }
            let start = self.base.saturating_add(address);
            let Some(objects) = self.collections.get(&start) else {
                return Err(format!(
                    "{at} refers to byte {start}, where no global heap collection starts"
                ));
            };
            let object = u16::try_from(index)
                .ok()
                .filter(|&i| i != 0)
                .and_then(|i| objects.get(&i));
            match object {
                None => {
                    return Err(format!(
                        "{at} refers to object {index} of the global heap collection at byte {start}, which has no such object"
                    ));
                }
                Some(&stored) if stored != len => {
                    return Err(format!(
                        "{at} claims {len} bytes but its heap object (collection at byte {start}, object {index}) holds {stored}"
                    ));
                }
                Some(_) => {}
            }
        }
        Ok(())
    }
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
        check_bytes(&good, 8).unwrap();
        // An object size grown past the end.
        let mut bad = good.clone();
        bad[24] = 0xff;
        bad[30] = 0x01;
        assert!(check_bytes(&bad, 8).unwrap_err().contains("runs past"));
        // A zeroed stretch: the objects read as free space of size 0.
        let mut zeroed = good.clone();
        zeroed[16..48].fill(0);
        assert!(check_bytes(&zeroed, 8).unwrap_err().contains("free space"));
        // A collection larger than the file.
        assert!(check_bytes(&good[..2000], 8).is_err());
        // The letters inside data, without a header, are ignored.
        check_bytes(b"xxGCOLxx", 8).unwrap();
    }

    /// A heap ID: length, address (8 bytes), index.
    fn id(len: u32, address: u64, index: u32) -> Vec<u8> {
        let mut id = len.to_le_bytes().to_vec();
        id.extend(address.to_le_bytes());
        id.extend(index.to_le_bytes());
        id
    }

    #[test]
    fn references_into_the_heap_must_name_a_walked_object_of_their_length() {
        // A file of 512 bytes of other data, then the collection at 512.
        let mut file = vec![0; 512];
        file.extend(collection());
        let index = HeapIndex {
            base: 0,
            offset_size: 8,
            length_size: 8,
            file_len: file.len() as u64,
            collections: check_bytes(&file, 8).unwrap(),
        };
        // Object 1 holds 3 bytes, object 2 none; address 0 is an empty text.
        let good = [id(3, 512, 1), id(0, 512, 2), id(0, 0, 0)].concat();
        index.check_ids(&good).unwrap();
        let refused = |bytes: Vec<u8>, words: &str| {
            let why = index.check_ids(&bytes).unwrap_err();
            assert!(why.contains(words), "{why}");
        };
        refused(id(3, 520, 1), "no global heap collection starts");
        refused(id(3, 512, 7), "no such object");
        refused(id(3, 512, 0), "no such object");
        refused(id(3, 512, 70_000), "no such object");
        refused(id(4000, 512, 1), "holds 3");
        refused(id(5, 0, 0), "refers to no heap object");
        refused(good[..20].to_vec(), "whole number");
    }

    #[test]
    fn the_superblock_gives_sizes_and_base() {
        let mut v0 = SIGNATURE.to_vec();
        v0.extend([0, 0, 0, 0, 0, 8, 8, 0]);
        v0.resize(24, 0);
        v0.extend(0u64.to_le_bytes());
        assert_eq!(superblock(&v0), Some((0, 8, 8)));
        // A version 2 superblock after a user block of 512 bytes.
        let mut v2 = vec![0; 512];
        v2.extend(SIGNATURE);
        v2.extend([2, 4, 8, 0]);
        v2.extend(512u32.to_le_bytes());
        assert_eq!(superblock(&v2), Some((512, 4, 8)));
        assert_eq!(superblock(b"not an HDF5 file"), None);
    }
}

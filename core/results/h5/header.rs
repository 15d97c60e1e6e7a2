//! The stored bytes of an attribute's or a dataset's variable-length
//! strings, found without the HDF5 library following them, so that
//! [`HeapIndex::check_ids`] can check every reference into the global heap
//! before any text is read (see `heap.rs`).
//!
//! The library gives where an object is (its object header's address, a
//! dataset's contiguous storage or chunks); the bytes are read from the
//! file here. An attribute's data is in an attribute message of its
//! object's header, which this module walks: HDF5 File Format
//! Specification, version 3.0, section IV.A.1.a (version 1 object header:
//! 16-byte prefix, messages of type (2 bytes), size (2), flags (1), 3
//! reserved bytes and data), IV.A.1.b (version 2: signature `OHDR`,
//! messages of type (1), size (2), flags (1), creation order (2, when the
//! header's flags say so); continuation blocks start with `OCHK` and end
//! with a 4-byte checksum), IV.A.2.q (continuation message: address and
//! length of the next block) and IV.A.2.m (attribute message, versions 1–3:
//! name, datatype and dataspace, each padded to 8 bytes in version 1, then
//! the data). A compact dataset's data is in its layout message (IV.A.2.i,
//! version 3 and 4: class 0, a 2-byte size, the data).

use std::collections::VecDeque;
use std::os::unix::fs::FileExt;
use std::path::Path;

use hdf5::dataset::{FillValue, Layout};
use hdf5::{Attribute, Dataset};

use super::heap::{HeapIndex, read_uint};

/// Object header message types (format specification, section IV.A.2).
const LAYOUT: u16 = 0x08;
const ATTRIBUTE: u16 = 0x0C;
const CONTINUATION: u16 = 0x10;
/// The attribute info message: the object keeps (some) attributes in dense
/// storage, a fractal heap indexed by a version 2 B-tree (format
/// specification, sections IV.A.2.v, III.G and III.A.2). HDF5 1.10 never
/// writes it with yawdyn's settings; HDF5 1.12 and newer (the static build)
/// do for an object with more than 8 attributes. Those attributes are read
/// without checking their heap references (known limit: walking the
/// fractal heap is not implemented).
const ATTRIBUTE_INFO: u16 = 0x15;

/// Header message flag: the message is shared (stored elsewhere).
const SHARED: u8 = 0x02;

/// Most header blocks followed for one object (a damaged continuation may
/// point back into the header).
const MAX_BLOCKS: usize = 256;

/// An object whose variable-length strings can be found in the file:
/// an attribute or a dataset.
pub(crate) trait StoredText: std::ops::Deref<Target = hdf5::Container> {
    /// The stored bytes of its `elements` elements (heap IDs of
    /// `index.id_size()` bytes each), read from the file `path`; `None`
    /// for an attribute in dense storage, which is not checked (see
    /// [`ATTRIBUTE_INFO`]).
    fn stored_text(
        &self,
        path: &Path,
        index: &HeapIndex,
        elements: u64,
    ) -> Result<Option<Vec<u8>>, String>;
}

impl StoredText for Attribute {
    fn stored_text(
        &self,
        path: &Path,
        index: &HeapIndex,
        elements: u64,
    ) -> Result<Option<Vec<u8>>, String> {
        let wanted = stored_len(index, elements)?;
        let name = self.name();
        let address = header_address(self.id())
            .ok_or("the address of its object's header cannot be found")?;
        // Every attribute message of that name (a damaged header might hold
        // two; the library reads one of them).
        let mut stored = Vec::new();
        let mut found = false;
        let mut dense = false;
        for message in header_messages(path, index, address)? {
            dense |= message.kind == ATTRIBUTE_INFO;
            if message.kind != ATTRIBUTE || message.flags & SHARED != 0 {
                continue;
            }
            let Some((named, data)) = attribute_parts(&message.data) else {
                continue;
            };
            if named == name.as_bytes() {
                found = true;
                stored.extend(data.get(..wanted).ok_or_else(|| {
                    format!(
                        "its stored data ({} bytes) is shorter than its {elements} texts ({wanted} bytes)",
                        data.len()
                    )
                })?);
            }
        }
        if found {
            Ok(Some(stored))
        } else if dense {
            Ok(None)
        } else {
            Err(
                "it is not stored in its object's header (shared attribute storage, which yawdyn never writes), so its texts cannot be checked"
                    .to_string(),
            )
        }
    }
}

impl StoredText for Dataset {
    fn stored_text(
        &self,
        path: &Path,
        index: &HeapIndex,
        elements: u64,
    ) -> Result<Option<Vec<u8>>, String> {
        dataset_text(self, path, index, elements).map(Some)
    }
}

/// The stored text of the dataset `ds` (see [`StoredText`]).
fn dataset_text(
    ds: &Dataset,
    path: &Path,
    index: &HeapIndex,
    elements: u64,
) -> Result<Vec<u8>, String> {
    let wanted = stored_len(index, elements)?;
    let dcpl = ds
        .dcpl()
        .map_err(|e| format!("its creation properties cannot be read ({e})"))?;
    if dcpl.fill_value_defined() == FillValue::UserDefined {
        return Err("its texts have a fill value, which yawdyn never writes".to_string());
    }
    if dcpl.has_filters() {
        return Err("its texts are filtered (compressed), which yawdyn never writes".to_string());
    }
    match dcpl.layout() {
        Layout::Contiguous => match ds.offset() {
            Some(start) => read_at(path, index, start, wanted as u64),
            // Never written: the library reads empty texts.
            None if ds.storage_size() == 0 => Ok(Vec::new()),
            None => Err("its storage is outside the file".to_string()),
        },
        Layout::Chunked => chunks(ds, path, index),
        Layout::Compact => {
            let address = header_address(ds.id())
                .ok_or("the address of its object header cannot be found")?;
            for message in header_messages(path, index, address)? {
                let d = &message.data;
                if message.kind == LAYOUT
                    && matches!(d.first(), Some(3 | 4))
                    && d.get(1) == Some(&0)
                {
                    let size = read_uint(d.get(2..4).unwrap_or_default()) as usize;
                    return d
                        .get(4..4 + size)
                        .filter(|data| data.len() == wanted)
                        .map(<[u8]>::to_vec)
                        .ok_or_else(|| {
                            format!("its compact data does not hold its {elements} texts")
                        });
                }
            }
            Err("its layout message cannot be found".to_string())
        }
        other => Err(format!("its layout ({other:?}) is not one yawdyn writes")),
    }
}

/// The stored bytes of `elements` heap IDs.
fn stored_len(index: &HeapIndex, elements: u64) -> Result<usize, String> {
    elements
        .checked_mul(index.id_size() as u64)
        .filter(|&n| n <= index.file_len)
        .map(|n| n as usize)
        .ok_or_else(|| format!("its {elements} texts need more bytes than the file has"))
}

/// The stored bytes of every chunk of the chunked dataset `ds`.
#[cfg(hdf5_chunk_info)]
fn chunks(ds: &Dataset, path: &Path, index: &HeapIndex) -> Result<Vec<u8>, String> {
    let count = ds
        .num_chunks()
        .ok_or("its chunks cannot be counted".to_string())?;
    let mut bytes = Vec::new();
    for i in 0..count {
        let chunk = ds
            .chunk_info(i)
            .ok_or_else(|| format!("chunk {i} cannot be found"))?;
        let len = usize::try_from(chunk.size).map_err(|_| format!("chunk {i} is too large"))?;
        if len % index.id_size() != 0 {
            return Err(format!(
                "chunk {i} of {len} bytes does not hold whole texts"
            ));
        }
        bytes.extend(read_at(path, index, chunk.addr, chunk.size)?);
    }
    Ok(bytes)
}

/// Without the chunk query of HDF5 1.10.5, chunked texts cannot be checked.
#[cfg(not(hdf5_chunk_info))]
fn chunks(_: &Dataset, _: &Path, _: &HeapIndex) -> Result<Vec<u8>, String> {
    Err("its texts are stored in chunks, which need HDF5 1.10.5 or newer to check".to_string())
}

/// `len` bytes of the file `path` from the absolute position `start`.
fn read_at(path: &Path, index: &HeapIndex, start: u64, len: u64) -> Result<Vec<u8>, String> {
    if start
        .checked_add(len)
        .is_none_or(|end| end > index.file_len)
    {
        return Err(format!(
            "{len} bytes at byte {start} run past the end of the file ({} bytes)",
            index.file_len
        ));
    }
    let mut bytes = vec![0; len as usize];
    std::fs::File::open(path)
        .and_then(|f| f.read_exact_at(&mut bytes, start))
        .map_err(|e| format!("cannot read {len} bytes at byte {start} ({e})"))?;
    Ok(bytes)
}

/// One object header message.
struct Message {
    kind: u16,
    flags: u8,
    data: Vec<u8>,
}

/// The messages of the object header at `address` (relative to the base
/// address), continuation blocks followed.
fn header_messages(path: &Path, index: &HeapIndex, address: u64) -> Result<Vec<Message>, String> {
    let start = index.base.saturating_add(address);
    let place = format!("the object header at byte {start}");
    let prefix_len = 32.min(index.file_len.saturating_sub(start));
    let prefix = read_at(path, index, start, prefix_len)?;
    let too_short = || format!("{place} is cut short");
    // (position, length, a continuation block of a version 2 header)
    let mut blocks = VecDeque::new();
    let version2 = prefix.starts_with(b"OHDR");
    let mut creation_order = false;
    if version2 {
        let flags = *prefix.get(5).ok_or_else(too_short)?;
        if prefix[4] != 2 {
            return Err(format!("{place} has version {}", prefix[4]));
        }
        creation_order = flags & 0x04 != 0;
        let mut p = 6;
        if flags & 0x20 != 0 {
            p += 16;
        }
        if flags & 0x10 != 0 {
            p += 4;
        }
        let width = 1usize << (flags & 3);
        let size = read_uint(prefix.get(p..p + width).ok_or_else(too_short)?);
        blocks.push_back((start + (p + width) as u64, size, false));
    } else {
        if prefix.first() != Some(&1) {
            return Err(format!("{place} is not an object header"));
        }
        let size = read_uint(prefix.get(8..12).ok_or_else(too_short)?);
        blocks.push_back((start + 16, size, false));
    }
    let header = if !version2 {
        8
    } else if creation_order {
        6
    } else {
        4
    };
    let mut messages = Vec::new();
    let mut followed = 0;
    while let Some((at, len, continued)) = blocks.pop_front() {
        followed += 1;
        if followed > MAX_BLOCKS {
            return Err(format!("{place} has more than {MAX_BLOCKS} blocks"));
        }
        let block = read_at(path, index, at, len)?;
        let body = if continued {
            if !block.starts_with(b"OCHK") || block.len() < 8 {
                return Err(format!(
                    "{place} continues at byte {at}, where no block starts"
                ));
            }
            &block[4..block.len() - 4]
        } else {
            &block[..]
        };
        let mut p = 0;
        while p + header <= body.len() {
            let (kind, size, flags) = if version2 {
                (
                    u16::from(body[p]),
                    read_uint(&body[p + 1..p + 3]) as usize,
                    body[p + 3],
                )
            } else {
                (
                    read_uint(&body[p..p + 2]) as u16,
                    read_uint(&body[p + 2..p + 4]) as usize,
                    body[p + 4],
                )
            };
            let data = body.get(p + header..p + header + size).ok_or_else(|| {
                format!(
                    "{place}: a message at byte {} runs past its block",
                    at + p as u64
                )
            })?;
            if kind == CONTINUATION {
                let (o, l) = (index.offset_size, index.length_size);
                let next = data.get(..o + l).ok_or_else(too_short)?;
                let next_at = index.base.saturating_add(read_uint(&next[..o]));
                blocks.push_back((next_at, read_uint(&next[o..]), version2));
            }
            messages.push(Message {
                kind,
                flags,
                data: data.to_vec(),
            });
            p += header + size;
        }
    }
    Ok(messages)
}

/// The name (without its NUL) and the data of an attribute message.
fn attribute_parts(d: &[u8]) -> Option<(&[u8], &[u8])> {
    let size = |at: usize| d.get(at..at + 2).map(|b| read_uint(b) as usize);
    let (name_len, type_len, space_len) = (size(2)?, size(4)?, size(6)?);
    let pad = |n: usize| n.div_ceil(8) * 8;
    let (name_at, data_at) = match d.first()? {
        1 => (8, 8 + pad(name_len) + pad(type_len) + pad(space_len)),
        2 => (8, 8 + name_len + type_len + space_len),
        3 => (9, 9 + name_len + type_len + space_len),
        _ => return None,
    };
    let name = d.get(name_at..name_at + name_len)?;
    let name = name.strip_suffix(&[0]).unwrap_or(name);
    Some((name, d.get(data_at..)?))
}

/// The address of the object header of the object `id` (for an
/// attribute: of the object it belongs to), relative to the base address.
#[cfg(hdf5_tokens)]
fn header_address(id: hdf5_sys::h5i::hid_t) -> Option<u64> {
    use hdf5_sys::h5o::{H5O_INFO_BASIC, H5O_info2_t, H5O_token_t, H5Oget_info3};
    let token = hdf5::sync::sync(|| {
        let mut info = std::mem::MaybeUninit::<H5O_info2_t>::uninit();
        // SAFETY: `info` is written by the library when it returns success.
        unsafe {
            (H5Oget_info3(id, info.as_mut_ptr(), H5O_INFO_BASIC) >= 0)
                .then(|| info.assume_init().token)
        }
    })?;
    // SAFETY: `H5O_token_t` is `repr(C)` around its bytes only.
    let bytes: [u8; 16] = unsafe { std::mem::transmute::<H5O_token_t, [u8; 16]>(token) };
    // The native file format's token is the header address, little-endian
    // in its first bytes (from memory of HDF5 1.12's native connector,
    // `H5VL_native_addr_to_token`; this branch is built only with HDF5 1.12
    // or newer, the static build).
    Some(read_uint(&bytes[..8]))
}

/// The address of the object header of the object `id` (for an
/// attribute: of the object it belongs to), relative to the base address.
#[cfg(not(hdf5_tokens))]
fn header_address(id: hdf5_sys::h5i::hid_t) -> Option<u64> {
    use hdf5_sys::h5o::H5O_info1_t;
    hdf5::sync::sync(|| {
        let mut info = std::mem::MaybeUninit::<H5O_info1_t>::uninit();
        // SAFETY: `info` is written by the library when it returns success.
        unsafe {
            #[cfg(hdf5_info2)]
            let status =
                hdf5_sys::h5o::H5Oget_info2(id, info.as_mut_ptr(), hdf5_sys::h5o::H5O_INFO_BASIC);
            #[cfg(not(hdf5_info2))]
            #[allow(deprecated)]
            let status = hdf5_sys::h5o::H5Oget_info1(id, info.as_mut_ptr());
            (status >= 0).then(|| info.assume_init().addr)
        }
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::results::h5::heap::heap_index;
    use crate::results::h5::{H5Context, TrackTimes};

    /// A file with a text attribute, a contiguous text list and a chunked
    /// text column: each reads back; a copy with the object index of one
    /// stored reference changed is refused before the library reads it.
    #[test]
    fn damaged_references_in_attributes_and_datasets_are_refused() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("sound.h5");
        {
            let ctx = H5Context::writer(&path, TrackTimes::Off);
            let file = ctx.create_file(&path).unwrap();
            ctx.attr_str(&file, "note", "hello").unwrap();
            ctx.dataset_strs(&file, "list", &["a", "bb", "ccc"])
                .unwrap();
            let column = ctx
                .growing::<hdf5::types::VarLenUnicode>(&file, "column", 2, None)
                .unwrap();
            ctx.write_text_at(&column, 0, &["x", "yy", "zzz"]).unwrap();
            file.close().unwrap();
        }
        let ctx = H5Context::reader(&path);
        let file = ctx.open_file().unwrap();
        assert_eq!(ctx.read_attr_str(&file, "note").unwrap(), "hello");
        assert_eq!(ctx.read_strs(&file, "list").unwrap(), ["a", "bb", "ccc"]);
        let column = ctx.open_dataset(&file, "column").unwrap();
        assert_eq!(ctx.read_strs_from(&column).unwrap(), ["x", "yy", "zzz"]);
        // The stored references, as found in the file.
        let index = heap_index(&path).unwrap().unwrap();
        let note = file.attr("note").unwrap().stored_text(&path, &index, 1);
        let list = ctx.open_dataset(&file, "list").unwrap();
        let stored = [
            ("note", note.unwrap().unwrap()),
            ("list", list.stored_text(&path, &index, 3).unwrap().unwrap()),
            (
                "column",
                column.stored_text(&path, &index, 3).unwrap().unwrap(),
            ),
        ];
        drop((list, column, file));
        let bytes = std::fs::read(&path).unwrap();
        for (k, (name, refs)) in stored.iter().enumerate() {
            // The last reference to a heap object (a chunk's unused
            // elements refer to none): its object index (last 4 bytes)
            // becomes 9999.
            let id = refs
                .chunks_exact(index.id_size())
                .rfind(|id| id[4..].iter().any(|&b| b != 0))
                .unwrap();
            let at = bytes
                .windows(id.len())
                .position(|w| w == id)
                .expect("the reference is in the file");
            let mut damaged = bytes.clone();
            damaged[at + id.len() - 4..at + id.len()].copy_from_slice(&9999u32.to_le_bytes());
            let bad = dir.path().join(format!("bad{k}.h5"));
            std::fs::write(&bad, &damaged).unwrap();
            let ctx = H5Context::reader(&bad);
            let file = ctx.open_file().unwrap();
            let why = match *name {
                "note" => ctx.read_attr_str(&file, "note").unwrap_err(),
                "list" => ctx.read_strs(&file, "list").unwrap_err(),
                _ => ctx.read_strs(&file, "column").unwrap_err(),
            };
            let why = format!("{why:?}");
            assert!(
                why.contains("object 9999") && why.contains(name),
                "{name}: {why}"
            );
        }
    }

    #[test]
    fn attribute_messages_of_each_version_give_name_and_data() {
        // Version 1: name "ab\0" padded to 8, datatype 3 bytes and
        // dataspace 5 bytes each padded to 8, then the data.
        let mut v1 = vec![1, 0, 3, 0, 3, 0, 5, 0];
        v1.extend(b"ab\0\0\0\0\0\0");
        v1.extend([9; 8]);
        v1.extend([9; 8]);
        v1.extend(b"DATA");
        assert_eq!(attribute_parts(&v1), Some((&b"ab"[..], &b"DATA"[..])));
        // Version 3: no padding, an encoding byte before the name.
        let mut v3 = vec![3, 0, 3, 0, 3, 0, 5, 0, 1];
        v3.extend(b"ab\0");
        v3.extend([9; 8]);
        v3.extend(b"DATA");
        assert_eq!(attribute_parts(&v3), Some((&b"ab"[..], &b"DATA"[..])));
        // Cut short or of an unknown version: nothing.
        assert_eq!(attribute_parts(&v1[..10]), None);
        assert_eq!(attribute_parts(&[7, 0, 0, 0, 0, 0, 0, 0]), None);
    }
}

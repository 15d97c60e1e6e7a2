//! Reading an input file safely: only a regular file, with the expected
//! extension, up to a size cap. A device (`/dev/zero` grows without end),
//! a FIFO or `/dev/stdin` (block), a folder or a huge file is refused with a
//! clear reason before anything is read.
//!
//! Every vehicle-file reader goes through [`read_vehicle_file`]; the script
//! runner reads scripts through [`read_text_file`].

use std::fs::File;
use std::io::{self, Read};
use std::path::Path;

use super::issue::ParamError;

/// Largest vehicle file read, bytes (1 MiB; the demo files are a few kB).
pub const MAX_VEHICLE_FILE_BYTES: u64 = 1 << 20;

/// The text of the vehicle file `path`: a regular `.toml` file of at most
/// [`MAX_VEHICLE_FILE_BYTES`].
pub fn read_vehicle_file(path: &Path) -> Result<String, ParamError> {
    read_text_file(path, Some("toml"), MAX_VEHICLE_FILE_BYTES).map_err(|source| ParamError::Read {
        path: path.to_path_buf(),
        source,
    })
}

/// The UTF-8 text of `path`, which must be a regular file (symbolic links
/// followed) of at most `max_bytes`, with the extension `extension` (case
/// ignored) when one is given. The refusals are `io::Error`s of kind
/// `InvalidInput` whose message says why.
pub fn read_text_file(path: &Path, extension: Option<&str>, max_bytes: u64) -> io::Result<String> {
    let refuse = |why: String| io::Error::new(io::ErrorKind::InvalidInput, why);
    if let Some(ext) = extension {
        let given = path.extension().and_then(|e| e.to_str());
        if !given.is_some_and(|e| e.eq_ignore_ascii_case(ext)) {
            return Err(refuse(format!("not a .{ext} file")));
        }
    }
    // Look before opening: opening a FIFO for reading would block.
    regular(&std::fs::metadata(path)?, max_bytes).map_err(refuse)?;
    let file = File::open(path)?;
    crate::output::note_read(path);
    // The file opened may differ from the one looked at (replaced between).
    regular(&file.metadata()?, max_bytes).map_err(refuse)?;
    let mut bytes = Vec::new();
    file.take(max_bytes + 1).read_to_end(&mut bytes)?;
    if bytes.len() as u64 > max_bytes {
        return Err(refuse(format!("larger than {max_bytes} bytes")));
    }
    String::from_utf8(bytes).map_err(|e| {
        let at = e.utf8_error().valid_up_to();
        let valid = std::str::from_utf8(&e.as_bytes()[..at]).unwrap_or_default();
        let (line, column) = super::load::line_column(valid, valid.len());
        refuse(format!(
            "not UTF-8 text: invalid byte at line {line}, column {column} (byte offset {at})"
        ))
    })
}

/// Error unless `meta` is a regular file of at most `max_bytes`.
fn regular(meta: &std::fs::Metadata, max_bytes: u64) -> Result<(), String> {
    if meta.is_dir() {
        return Err("a folder, not a file".into());
    }
    if !meta.is_file() {
        return Err("not a regular file (a device, FIFO or socket)".into());
    }
    if meta.len() > max_bytes {
        return Err(format!(
            "{} bytes, larger than the limit of {max_bytes} bytes",
            meta.len()
        ));
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Devices, folders, other extensions and oversized files are refused
    /// before anything is read; a small regular file is read.
    #[test]
    fn only_small_regular_files_with_the_extension_are_read() {
        let dir = tempfile::tempdir().unwrap();
        let ok = dir.path().join("car.toml");
        std::fs::write(&ok, "a = 1\n").unwrap();
        assert_eq!(read_text_file(&ok, Some("toml"), 100).unwrap(), "a = 1\n");
        let why = |p: &Path, ext| read_text_file(p, ext, 100).unwrap_err().to_string();
        assert!(why(&ok, Some("rhai")).contains("not a .rhai file"));
        assert!(why(dir.path(), None).contains("folder"));
        if Path::new("/dev/zero").exists() {
            assert!(why(Path::new("/dev/zero"), None).contains("not a regular file"));
        }
        let big = dir.path().join("big.toml");
        std::fs::write(&big, vec![b'x'; 101]).unwrap();
        assert!(why(&big, Some("toml")).contains("larger than"));
        let bad = dir.path().join("bad.toml");
        std::fs::write(&bad, [b'a', 0xff]).unwrap();
        assert!(why(&bad, Some("toml")).contains("not UTF-8"));
        let e = read_vehicle_file(Path::new("/dev/stdin")).unwrap_err();
        assert!(e.to_string().contains("not a .toml file"), "{e}");
    }
}

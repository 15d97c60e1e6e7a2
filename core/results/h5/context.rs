//! The one HDF5 layer of the crate: [`H5Context`] with the string and number
//! helpers, the growing (chunked, extendable) one-dimensional columns of sweep
//! files, the unlocked file builder and the switch for HDF5 object time
//! tracking. Errors are [`H5Error`]s naming the file and whether it was being
//! read or written; each boundary converts them into its own enum
//! ([`ResultsError`], `SweepError` in [`crate::sweep`]). The reading
//! methods are in `read.rs`.

use std::path::{Path, PathBuf};
use std::str::FromStr;

use hdf5::types::VarLenUnicode;
use hdf5::{Dataset, File, Group, H5Type, Location};

use super::header::StoredText;
use crate::results::{Access, ResultsError};

/// The text of a variable-length string read from a file, checked to be
/// UTF-8 (a damaged file may hold any bytes there).
pub(crate) fn utf8_text(text: &VarLenUnicode) -> Result<String, String> {
    std::str::from_utf8(text.as_bytes())
        .map(str::to_string)
        .map_err(|e| format!("its text is not UTF-8 ({e})"))
}

/// Checks an object (dataset or attribute) of the file `path` before its
/// data is read, so that a damaged or foreign file gives an error instead
/// of a crash inside the HDF5 library or an allocation of the size a
/// damaged header claims: its element type is of the class the layout has
/// there (a number where numbers are read, a variable-length string where
/// text is read), it holds no more bytes than the file (yawdyn stores no
/// compressed data, so every element is stored in full), and, for text,
/// every stored reference into the global heap names an object of a
/// collection that `heap.rs` walked, of the text's length (the library
/// follows them unchecked). Returns the reason when the object does not
/// fit.
pub(crate) fn check_before_read<T: H5Type, O: StoredText>(
    object: &O,
    path: &Path,
) -> Result<(), String> {
    use hdf5::types::TypeDescriptor as D;
    let file_len = std::fs::metadata(path).map_or(0, |m| m.len());
    let dtype = object
        .dtype()
        .map_err(|e| format!("its element type cannot be read ({e})"))?;
    let found = dtype
        .to_descriptor()
        .map_err(|e| format!("its element type is not one yawdyn writes ({e})"))?;
    let expected = T::type_descriptor();
    let numeric = |d: &D| matches!(d, D::Integer(_) | D::Unsigned(_) | D::Float(_) | D::Boolean);
    let text = |d: &D| matches!(d, D::VarLenUnicode | D::VarLenAscii);
    let fits = (numeric(&found) && numeric(&expected))
        || (text(&found) && text(&expected) && found == expected);
    if !fits {
        return Err(format!("holds {found}, where yawdyn stores {expected}"));
    }
    let elements = object.space().map(|s| s.size()).unwrap_or(usize::MAX) as u128;
    let bytes = elements.saturating_mul(dtype.size() as u128);
    if bytes > u128::from(file_len) {
        return Err(format!(
            "claims {elements} elements ({bytes} bytes), more than the whole file ({file_len} bytes)"
        ));
    }
    if text(&expected) {
        let index = super::heap::heap_index(path)
            .map_err(|why| format!("lies in a damaged file: {why}"))?
            .ok_or(
                "lies in a file whose superblock cannot be read, so its texts cannot be checked",
            )?;
        // `None`: an attribute in dense storage (see `header.rs`), read
        // unchecked.
        if let Some(stored) = object.stored_text(path, &index, elements as u64)? {
            index.check_ids(&stored)?;
        }
    }
    Ok(())
}

/// Whether HDF5 records creation/modification times in the object headers
/// of the groups a [`H5Context`] creates (and of the root group of a file it
/// creates).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum TrackTimes {
    /// HDF5's default; results files keep it.
    On,
    /// No times stored: sweep files, so equal inputs give byte-identical files.
    Off,
}

/// An error of the shared HDF5 layer; always names the file. Converted with
/// `From` into [`ResultsError`] (and into `SweepError` in [`crate::sweep`]).
#[derive(Debug)]
pub(crate) enum H5Error {
    /// The HDF5 library reported an error while doing `action`.
    Hdf5 {
        /// The file.
        path: PathBuf,
        /// What was being done, e.g. `writing dataset time in /`.
        action: String,
        /// Reading or writing.
        access: Access,
        /// The HDF5 error.
        source: hdf5::Error,
    },
    /// The data cannot be stored, or the file's contents do not fit together.
    Invalid {
        /// The file.
        path: PathBuf,
        /// What is wrong.
        reason: String,
    },
}

impl From<H5Error> for ResultsError {
    fn from(e: H5Error) -> ResultsError {
        match e {
            H5Error::Hdf5 {
                path,
                action,
                access,
                source,
            } => ResultsError::Hdf5 {
                path,
                action,
                access,
                source,
            },
            H5Error::Invalid { path, reason } => ResultsError::Invalid { path, reason },
        }
    }
}

/// Open or create HDF5 files without HDF5's own `flock` locking.
///
/// The lock guards against a reader opening a file that is being written in
/// place; our files never are (they are written under a private temporary
/// name and renamed into place whole). With the lock on, HDF5 1.10 keeps its
/// file descriptors open across `fork`, so a child process spawned by another
/// thread can inherit the lock and make a later open fail with `EAGAIN`; and
/// locking fails outright on some network file systems (common practice is to
/// disable it there too).
fn unlocked_file() -> hdf5::file::FileBuilder {
    let mut builder = File::with_options();
    builder.with_fapl(|fapl| fapl.file_locking(false));
    builder
}

/// Context for one file: the writers and readers of the shared layout, with
/// HDF5 errors turned into [`H5Error`]s naming the file.
pub(crate) struct H5Context {
    /// The file as the user named it (not the temporary name written to).
    pub(crate) path: PathBuf,
    track_times: TrackTimes,
    access: Access,
}

impl H5Context {
    /// A context for reading the file `path`.
    pub(crate) fn reader(path: &Path) -> H5Context {
        H5Context {
            path: path.to_path_buf(),
            track_times: TrackTimes::On,
            access: Access::Read,
        }
    }

    /// A context for writing the file that will be called `path`;
    /// `track_times` applies to the groups it creates.
    pub(crate) fn writer(path: &Path, track_times: TrackTimes) -> H5Context {
        H5Context {
            path: path.to_path_buf(),
            track_times,
            access: Access::Write,
        }
    }

    /// Creates (truncating) the HDF5 file `temp`, unlocked, with the root
    /// group's time tracking as set for this context.
    pub(crate) fn create_file(&self, temp: &Path) -> Result<File, H5Error> {
        let mut builder = unlocked_file();
        if self.track_times == TrackTimes::Off {
            builder.with_fcpl(|fcpl| fcpl.obj_track_times(false));
        }
        builder
            .create(temp)
            .map_err(self.h5("creating the HDF5 file"))
    }

    /// Opens [`H5Context::path`] read-only, unlocked, after checking that
    /// it is a regular file (a FIFO would block, a device never end), and
    /// records it as an input that no output of this command may replace.
    pub(crate) fn open_file(&self) -> Result<File, H5Error> {
        match std::fs::metadata(&self.path) {
            Ok(meta) if meta.is_dir() => return Err(self.invalid("a folder, not a file")),
            Ok(meta) if !meta.is_file() => {
                return Err(self.invalid("not a regular file (a device, FIFO or socket)"));
            }
            _ => {}
        }
        crate::output::note_read(&self.path);
        super::heap::check_global_heaps(&self.path)
            .map_err(|why| self.invalid(format!("the file is damaged: {why}")))?;
        unlocked_file()
            .open(&self.path)
            .map_err(self.h5("opening the file as HDF5"))
    }

    /// [`check_before_read`] for an object of this file, as an [`H5Error`]
    /// naming the object.
    pub(crate) fn check_object<T: H5Type, O: StoredText>(
        &self,
        object: &O,
        name: &str,
    ) -> Result<(), H5Error> {
        check_before_read::<T, O>(object, &self.path)
            .map_err(|why| self.invalid(format!("{name} is damaged or not of this layout: {why}")))
    }

    /// Maps an HDF5 error met while doing `action`.
    pub(crate) fn h5(&self, action: impl Into<String>) -> impl FnOnce(hdf5::Error) -> H5Error {
        let path = self.path.clone();
        let action = action.into();
        let access = self.access;
        move |source| H5Error::Hdf5 {
            path,
            action,
            access,
            source,
        }
    }

    /// An [`H5Error::Invalid`] for this file.
    pub(crate) fn invalid(&self, reason: impl Into<String>) -> H5Error {
        H5Error::Invalid {
            path: self.path.clone(),
            reason: reason.into(),
        }
    }

    // ----- writing -------------------------------------------------------

    /// Creates the empty one-dimensional dataset `name` in `group` that grows
    /// along its one dimension, stored in chunks of `chunk` elements; with
    /// `fill`, elements never written read as that value.
    pub(crate) fn growing<T: H5Type>(
        &self,
        group: &Group,
        name: &str,
        chunk: usize,
        fill: Option<T>,
    ) -> Result<Dataset, H5Error> {
        let mut builder = group
            .new_dataset::<T>()
            .chunk(chunk.max(1))
            .shape(hdf5::SimpleExtents::resizable([0]));
        if let Some(fill) = fill {
            builder = builder.fill_value(fill);
        }
        builder
            .create(name)
            .map_err(self.h5(format!("creating dataset {name} in {}", group.name())))
    }

    /// Writes `data` to elements `start .. start + data.len()` of the growing
    /// dataset `ds`, extending it first to that length when it is shorter.
    pub(crate) fn write_at<T: H5Type>(
        &self,
        ds: &Dataset,
        start: usize,
        data: &[T],
    ) -> Result<(), H5Error> {
        let end = start + data.len();
        if ds.size() < end {
            ds.resize(end)
                .map_err(self.h5(format!("extending {} to {end} elements", ds.name())))?;
        }
        ds.write_slice(data, start..end)
            .map_err(self.h5(format!("writing elements {start}..{end} of {}", ds.name())))
    }

    /// Writes the texts `items` to elements `start ..` of the growing text
    /// dataset `ds` (see [`H5Context::write_at`]).
    pub(crate) fn write_text_at(
        &self,
        ds: &Dataset,
        start: usize,
        items: &[&str],
    ) -> Result<(), H5Error> {
        let values = self.unicodes(&format!("dataset {}", ds.name()), items)?;
        self.write_at(ds, start, &values)
    }

    /// Creates group `name` in `parent`, with this context's time tracking.
    pub(crate) fn group(&self, parent: &Group, name: &str) -> Result<Group, H5Error> {
        let mut builder = parent.create_group_builder();
        if self.track_times == TrackTimes::Off {
            builder = builder.obj_track_times(false);
        }
        builder
            .create(name)
            .map_err(self.h5(format!("creating group {name} in {}", parent.name())))
    }

    fn unicode(&self, what: &str, text: &str) -> Result<VarLenUnicode, H5Error> {
        VarLenUnicode::from_str(text)
            .map_err(|_| self.invalid(format!("{what} contains a NUL character")))
    }

    fn unicodes(&self, what: &str, items: &[&str]) -> Result<Vec<VarLenUnicode>, H5Error> {
        items.iter().map(|text| self.unicode(what, text)).collect()
    }

    /// Writes the text scalar attribute `name` on `loc`.
    pub(crate) fn attr_str(&self, loc: &Location, name: &str, text: &str) -> Result<(), H5Error> {
        let what = format!("attribute {name} of {}", loc.name());
        let value = self.unicode(&what, text)?;
        self.attr_scalar(loc, name, &value)
    }

    /// Writes the text-list attribute `name` on `loc`.
    pub(crate) fn attr_strs(
        &self,
        loc: &Location,
        name: &str,
        items: &[&str],
    ) -> Result<(), H5Error> {
        let what = format!("attribute {name} of {}", loc.name());
        let values = self.unicodes(&what, items)?;
        loc.new_attr_builder()
            .with_data(&values[..])
            .create(name)
            .map(|_| ())
            .map_err(self.h5(format!("writing {what}")))
    }

    /// Writes the f64 scalar attribute `name` on `loc`.
    pub(crate) fn attr_f64(&self, loc: &Location, name: &str, value: f64) -> Result<(), H5Error> {
        self.attr_scalar(loc, name, &value)
    }

    /// Writes the i64 scalar attribute `name` on `loc`.
    pub(crate) fn attr_i64(&self, loc: &Location, name: &str, value: i64) -> Result<(), H5Error> {
        self.attr_scalar(loc, name, &value)
    }

    /// Creates the i64 attribute `name` of `len` values on `loc`, to be
    /// written (and written again) with [`H5Context::write_attr_i64s`].
    pub(crate) fn attr_i64s(
        &self,
        loc: &Location,
        name: &str,
        len: usize,
    ) -> Result<hdf5::Attribute, H5Error> {
        loc.new_attr::<i64>()
            .shape(len)
            .create(name)
            .map_err(self.h5(format!("creating attribute {name} of {}", loc.name())))
    }

    /// Writes `values` to the attribute `attr` made by [`H5Context::attr_i64s`].
    pub(crate) fn write_attr_i64s(
        &self,
        attr: &hdf5::Attribute,
        values: &[i64],
    ) -> Result<(), H5Error> {
        attr.write_raw(values)
            .map_err(self.h5(format!("writing attribute {}", attr.name())))
    }

    /// Removes the attribute `name` of `loc`.
    pub(crate) fn delete_attr(&self, loc: &Location, name: &str) -> Result<(), H5Error> {
        loc.delete_attr(name)
            .map_err(self.h5(format!("removing attribute {name} of {}", loc.name())))
    }

    fn attr_scalar<T: H5Type>(&self, loc: &Location, name: &str, value: &T) -> Result<(), H5Error> {
        loc.new_attr::<T>()
            .shape(())
            .create(name)
            .and_then(|attr| attr.write_scalar(value))
            .map_err(self.h5(format!("writing attribute {name} of {}", loc.name())))
    }

    /// Writes the one-dimensional f64 dataset `name` in `group`.
    pub(crate) fn dataset_f64(
        &self,
        group: &Group,
        name: &str,
        data: &[f64],
    ) -> Result<Dataset, H5Error> {
        self.dataset_1d(group, name, data)
    }

    /// Writes the one-dimensional dataset `name` in `group` (numbers or text).
    pub(crate) fn dataset_1d<T: H5Type>(
        &self,
        group: &Group,
        name: &str,
        data: &[T],
    ) -> Result<Dataset, H5Error> {
        group
            .new_dataset_builder()
            .with_data(data)
            .create(name)
            .map_err(self.h5(format!("writing dataset {name} in {}", group.name())))
    }

    /// Writes the text scalar dataset `name` in `group`.
    pub(crate) fn dataset_str(&self, group: &Group, name: &str, text: &str) -> Result<(), H5Error> {
        let what = format!("dataset {name} in {}", group.name());
        let value = self.unicode(&what, text)?;
        group
            .new_dataset::<VarLenUnicode>()
            .shape(())
            .create(name)
            .and_then(|ds| ds.write_scalar(&value))
            .map_err(self.h5(format!("writing {what}")))
    }

    /// Writes the one-dimensional text dataset `name` in `group`.
    pub(crate) fn dataset_strs(
        &self,
        group: &Group,
        name: &str,
        items: &[&str],
    ) -> Result<(), H5Error> {
        let what = format!("dataset {name} in {}", group.name());
        let values = self.unicodes(&what, items)?;
        self.dataset_1d(group, name, &values).map(|_| ())
    }
}

//! The one HDF5 layer of the crate: [`H5Context`] with the string and number
//! helpers, the growing (chunked, extendable) one-dimensional columns of sweep
//! files, the unlocked file builder and the switch for HDF5 object time
//! tracking. Errors are [`H5Error`]s naming the file and whether it was being
//! read or written; each boundary converts them into its own enum
//! ([`ResultsError`], `SweepError` in [`crate::sweep`]).

use std::ops::Range;
use std::path::{Path, PathBuf};
use std::str::FromStr;

use hdf5::types::VarLenUnicode;
use hdf5::{Dataset, File, Group, H5Type, Location};

use crate::results::{Access, ResultsError};

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

    /// Opens [`H5Context::path`] read-only, unlocked.
    pub(crate) fn open_file(&self) -> Result<File, H5Error> {
        unlocked_file()
            .open(&self.path)
            .map_err(self.h5("opening the file as HDF5"))
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

    // ----- reading -------------------------------------------------------

    /// Opens group `name` in `parent`.
    pub(crate) fn open_group(&self, parent: &Group, name: &str) -> Result<Group, H5Error> {
        parent
            .group(name)
            .map_err(self.h5(format!("opening group {name} in {}", parent.name())))
    }

    /// Opens dataset `name` in `group`.
    pub(crate) fn open_dataset(&self, group: &Group, name: &str) -> Result<Dataset, H5Error> {
        group
            .dataset(name)
            .map_err(self.h5(format!("opening dataset {name} in {}", group.name())))
    }

    /// Reads the text scalar attribute `name` of `loc`.
    pub(crate) fn read_attr_str(&self, loc: &Location, name: &str) -> Result<String, H5Error> {
        self.read_attr_scalar::<VarLenUnicode>(loc, name, "text")
            .map(|text| text.as_str().to_string())
    }

    /// Reads the f64 scalar attribute `name` of `loc`.
    pub(crate) fn read_attr_f64(&self, loc: &Location, name: &str) -> Result<f64, H5Error> {
        self.read_attr_scalar(loc, name, "number")
    }

    /// Reads the i64 scalar attribute `name` of `loc`.
    pub(crate) fn read_attr_i64(&self, loc: &Location, name: &str) -> Result<i64, H5Error> {
        self.read_attr_scalar(loc, name, "integer")
    }

    fn read_attr_scalar<T: H5Type>(
        &self,
        loc: &Location,
        name: &str,
        kind: &str,
    ) -> Result<T, H5Error> {
        loc.attr(name)
            .and_then(|attr| attr.read_scalar::<T>())
            .map_err(self.h5(format!("reading {kind} attribute {name} of {}", loc.name())))
    }

    /// Reads the one-dimensional f64 dataset `name` in `group`.
    pub(crate) fn read_f64s(&self, group: &Group, name: &str) -> Result<Vec<f64>, H5Error> {
        self.read_1d(group, name)
    }

    /// Reads the one-dimensional numeric dataset `name` in `group`.
    pub(crate) fn read_1d<T: H5Type>(&self, group: &Group, name: &str) -> Result<Vec<T>, H5Error> {
        let ds = self.open_dataset(group, name)?;
        self.read_1d_from(&ds)
    }

    /// Reads the numbers of the one-dimensional dataset `ds`.
    pub(crate) fn read_1d_from<T: H5Type>(&self, ds: &Dataset) -> Result<Vec<T>, H5Error> {
        self.check_1d(ds)?;
        ds.read_raw()
            .map_err(self.h5(format!("reading numbers from {}", ds.name())))
    }

    fn check_1d(&self, ds: &Dataset) -> Result<(), H5Error> {
        if ds.ndim() == 1 {
            Ok(())
        } else {
            Err(self.invalid(format!("{} is not one-dimensional", ds.name())))
        }
    }

    /// Reads elements `range` of the one-dimensional dataset `ds`, after
    /// checking that it holds them.
    pub(crate) fn read_range<T: H5Type>(
        &self,
        ds: &Dataset,
        range: Range<usize>,
    ) -> Result<Vec<T>, H5Error> {
        self.check_1d(ds)?;
        if range.end > ds.size() || range.start > range.end {
            return Err(self.invalid(format!(
                "{} has {} elements; elements {}..{} were asked for",
                ds.name(),
                ds.size(),
                range.start,
                range.end
            )));
        }
        if range.is_empty() {
            return Ok(Vec::new());
        }
        let what = format!(
            "reading elements {}..{} of {}",
            range.start,
            range.end,
            ds.name()
        );
        ds.read_slice_1d::<T, _>(range)
            .map(|a| a.into_iter().collect())
            .map_err(self.h5(what))
    }

    /// Reads the texts of the one-dimensional text dataset `ds`.
    pub(crate) fn read_strs_from(&self, ds: &Dataset) -> Result<Vec<String>, H5Error> {
        self.check_1d(ds)?;
        ds.read_raw::<VarLenUnicode>()
            .map(|items| items.iter().map(|t| t.as_str().to_string()).collect())
            .map_err(self.h5(format!("reading text list from {}", ds.name())))
    }

    /// Reads the text scalar dataset `name` in `group`.
    pub(crate) fn read_str(&self, group: &Group, name: &str) -> Result<String, H5Error> {
        let ds = self.open_dataset(group, name)?;
        ds.read_scalar::<VarLenUnicode>()
            .map(|text| text.as_str().to_string())
            .map_err(self.h5(format!("reading text from {}", ds.name())))
    }

    /// Reads the one-dimensional text dataset `name` in `group`.
    pub(crate) fn read_strs(&self, group: &Group, name: &str) -> Result<Vec<String>, H5Error> {
        let ds = self.open_dataset(group, name)?;
        self.read_strs_from(&ds)
    }
}

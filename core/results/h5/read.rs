//! The reading half of [`H5Context`]: groups, datasets, attributes and text,
//! each checked against the layout (and every text reference against the
//! global heap) before the library reads it.

use std::ops::Range;

use hdf5::types::VarLenUnicode;
use hdf5::{Dataset, Group, H5Type, Location};

use super::context::{H5Context, H5Error, utf8_text};

impl H5Context {
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
        let text = self.read_attr_scalar::<VarLenUnicode>(loc, name, "text")?;
        self.utf8(&text, &format!("attribute {name} of {}", loc.name()))
    }

    /// The text of `text` read from `what`, checked to be UTF-8 (the HDF5
    /// binding does not check).
    fn utf8(&self, text: &VarLenUnicode, what: &str) -> Result<String, H5Error> {
        utf8_text(text)
            .map_err(|why| self.invalid(format!("{what} is damaged or not of this layout: {why}")))
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
        let what = format!("{kind} attribute {name} of {}", loc.name());
        let attr = loc.attr(name).map_err(self.h5(format!("opening {what}")))?;
        self.check_object::<T, _>(&attr, &what)?;
        if attr.ndim() != 0 {
            return Err(self.invalid(format!("{what} is not a single value")));
        }
        attr.read_scalar::<T>()
            .map_err(self.h5(format!("reading {what}")))
    }

    /// Reads the one-dimensional i64 attribute `name` of `loc`; `None`
    /// when `loc` has no such attribute.
    pub(crate) fn read_attr_i64s(
        &self,
        loc: &Location,
        name: &str,
    ) -> Result<Option<Vec<i64>>, H5Error> {
        let what = format!("integer list attribute {name} of {}", loc.name());
        let names = loc
            .attr_names()
            .map_err(self.h5(format!("listing the attributes of {}", loc.name())))?;
        if !names.iter().any(|n| n == name) {
            return Ok(None);
        }
        let attr = loc.attr(name).map_err(self.h5(format!("opening {what}")))?;
        self.check_object::<i64, _>(&attr, &what)?;
        if attr.ndim() != 1 {
            return Err(self.invalid(format!("{what} is not a list")));
        }
        attr.read_raw::<i64>()
            .map(Some)
            .map_err(self.h5(format!("reading {what}")))
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
        self.check_object::<T, _>(ds, &ds.name())?;
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
        self.check_object::<T, _>(ds, &ds.name())?;
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
        self.check_object::<VarLenUnicode, _>(ds, &ds.name())?;
        let items = ds
            .read_raw::<VarLenUnicode>()
            .map_err(self.h5(format!("reading text list from {}", ds.name())))?;
        items.iter().map(|t| self.utf8(t, &ds.name())).collect()
    }

    /// Reads the first `len` texts of the one-dimensional text dataset `ds`,
    /// after checking that it holds them.
    pub(crate) fn read_strs_head(&self, ds: &Dataset, len: usize) -> Result<Vec<String>, H5Error> {
        let items = self.read_range::<VarLenUnicode>(ds, 0..len)?;
        items.iter().map(|t| self.utf8(t, &ds.name())).collect()
    }

    /// Reads the text scalar dataset `name` in `group`.
    pub(crate) fn read_str(&self, group: &Group, name: &str) -> Result<String, H5Error> {
        let ds = self.open_dataset(group, name)?;
        self.check_object::<VarLenUnicode, _>(&ds, &ds.name())?;
        if ds.ndim() != 0 {
            return Err(self.invalid(format!("{} is not a single text", ds.name())));
        }
        let text = ds
            .read_scalar::<VarLenUnicode>()
            .map_err(self.h5(format!("reading text from {}", ds.name())))?;
        self.utf8(&text, &ds.name())
    }

    /// Reads the one-dimensional text dataset `name` in `group`.
    pub(crate) fn read_strs(&self, group: &Group, name: &str) -> Result<Vec<String>, H5Error> {
        let ds = self.open_dataset(group, name)?;
        self.read_strs_from(&ds)
    }
}

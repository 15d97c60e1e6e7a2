//! The names and storage sizes of the sweep-file layout, read by both the
//! writer and the reader (the layout itself is documented in
//! [`crate::sweep`]).

/// Group of the sweep's inputs.
pub(crate) const SPEC: &str = "spec";
/// Group of the per-case table.
pub(crate) const SUMMARY: &str = "summary";
/// Column of global case indices; written last in each block.
pub(crate) const CASE_INDEX: &str = "case_index";
/// Column of case statuses (text).
pub(crate) const STATUS: &str = "status";
/// Column of case messages (text).
pub(crate) const MESSAGE: &str = "message";
/// Column of run-failure times, s.
pub(crate) const FAILURE_TIME: &str = "failure_time_s";
/// Column of each row's first sample.
pub(crate) const SAMPLE_START: &str = "sample_start";
/// Column of each row's sample count.
pub(crate) const SAMPLE_COUNT: &str = "sample_count";
/// Text list of the varied keys.
pub(crate) const PARAMETER_ORDER: &str = "parameter_order";
/// Group of parameter columns.
pub(crate) const PARAMETERS: &str = "parameters";
/// Growing text list of metric names.
pub(crate) const METRIC_ORDER: &str = "metric_order";
/// Group of metric columns.
pub(crate) const METRICS: &str = "metrics";
/// Attribute of a metric column: first case that reported it.
pub(crate) const FIRST_CASE: &str = "first_case";
/// Growing text list of criterion names.
pub(crate) const CRITERION_ORDER: &str = "criterion_order";
/// Group of criterion groups.
pub(crate) const CRITERIA: &str = "criteria";
/// The four columns of a criterion group.
pub(crate) const CRITERION_VALUE: &str = "value";
/// Lower-limit column of a criterion.
pub(crate) const CRITERION_LOWER: &str = "lower";
/// Upper-limit column of a criterion.
pub(crate) const CRITERION_UPPER: &str = "upper";
/// Passed column of a criterion (i8: 1, 0, −1 = not evaluated).
pub(crate) const CRITERION_PASSED: &str = "passed";
/// Concatenated sample times.
pub(crate) const TIME: &str = "time";
/// Text list of the stored channels.
pub(crate) const CHANNEL_ORDER: &str = "channel_order";
/// Group of concatenated channels.
pub(crate) const CHANNELS: &str = "channels";

/// Root attribute of an unfinished file only (removed when the file is
/// complete): the [`ResumePoint`] of its last complete block, i64\[5\].
pub(crate) const UNFINISHED: &str = "unfinished";

/// How much of an unfinished sweep file is complete: written before the
/// last flush to disk of the file, read by `sweep --resume`. Stored as the
/// root attribute [`UNFINISHED`], in the order of the fields.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) struct ResumePoint {
    /// Summary rows complete (cases, in case order from the file's first).
    pub rows: usize,
    /// Samples of those rows (per channel and in `/time`).
    pub samples: usize,
    /// Entries of `/summary/metric_order` that belong to those rows.
    pub metrics: usize,
    /// Entries of `/summary/criterion_order` that belong to those rows.
    pub criteria: usize,
    /// Checksum of everything the writer wrote for those rows
    /// (`writer::Checksum`).
    pub checksum: u64,
}

impl ResumePoint {
    /// The attribute's values.
    pub(crate) fn to_values(self) -> [i64; 5] {
        [
            self.rows as i64,
            self.samples as i64,
            self.metrics as i64,
            self.criteria as i64,
            self.checksum as i64,
        ]
    }

    /// The point stored as `values`; `None` when they cannot be one.
    pub(crate) fn from_values(values: &[i64]) -> Option<ResumePoint> {
        let count = |v: i64| usize::try_from(v).ok();
        match *values {
            [rows, samples, metrics, criteria, checksum] => Some(ResumePoint {
                rows: count(rows)?,
                samples: count(samples)?,
                metrics: count(metrics)?,
                criteria: count(criteria)?,
                checksum: checksum as u64,
            }),
            _ => None,
        }
    }
}

/// Rows per HDF5 chunk of the summary columns (4 KiB of f64).
pub(crate) const SUMMARY_CHUNK: usize = 512;
/// Entries per HDF5 chunk of the growing name lists.
pub(crate) const NAME_CHUNK: usize = 64;
/// Smallest and largest HDF5 chunk of the sample datasets, samples (8 KiB
/// and 512 KiB of f64).
pub(crate) const SAMPLE_CHUNK_RANGE: (usize, usize) = (1024, 65_536);
/// Cases the sample chunk is sized to hold (of the first case that ran).
pub(crate) const CASES_PER_SAMPLE_CHUNK: usize = 8;

/// Cases per write block: the writer appends a block with one write per
/// dataset once it holds this many cases ...
pub(crate) const BLOCK_CASES: usize = 64;
/// ... or this many sample values (8 MiB of f64), whichever comes first.
pub(crate) const BLOCK_VALUES: usize = 1 << 20;

/// HDF5 chunk of the sample datasets for cases of `samples` samples: room
/// for [`CASES_PER_SAMPLE_CHUNK`] such cases, a power of two within
/// [`SAMPLE_CHUNK_RANGE`].
pub(crate) fn sample_chunk(samples: usize) -> usize {
    let (low, high) = SAMPLE_CHUNK_RANGE;
    samples
        .saturating_mul(CASES_PER_SAMPLE_CHUNK)
        .checked_next_power_of_two()
        .unwrap_or(high)
        .clamp(low, high)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn resume_points_round_trip_and_refuse_negative_counts() {
        let point = ResumePoint {
            rows: 128,
            samples: 12_345,
            metrics: 2,
            criteria: 1,
            checksum: 0xfedc_ba98_7654_3210,
        };
        assert_eq!(ResumePoint::from_values(&point.to_values()), Some(point));
        assert_eq!(ResumePoint::from_values(&[1, -2, 0, 0, 7]), None);
        assert_eq!(ResumePoint::from_values(&[1, 2, 0, 0]), None);
    }

    #[test]
    fn sample_chunks_are_powers_of_two_in_range() {
        assert_eq!(sample_chunk(0), 1024);
        assert_eq!(sample_chunk(100), 1024);
        assert_eq!(sample_chunk(674), 8192);
        assert_eq!(sample_chunk(1_000_000), 65_536);
        assert_eq!(sample_chunk(usize::MAX), 65_536);
    }
}

//! Vehicle parameter files: the raw TOML schema, validation into the checked
//! [`Vehicle`](crate::params) the physics uses, and dotted-path overrides.

mod issue;

pub use issue::{ParamError, ParamIssue};

//! JUnit XML reports of regression checks, the format CI servers read
//! (common practice: the `testsuites`/`testsuite`/`testcase` elements with
//! `failure` and `error` children and `tests`, `failures`, `errors`, `time`
//! counts).

use std::path::Path;

use crate::results::{ResultsError, write_atomically};

/// How one checked item ended.
#[derive(Debug, Clone, PartialEq)]
pub enum JunitOutcome {
    /// Within tolerance.
    Passed,
    /// Compared and outside tolerance; the message says how.
    Failed(String),
    /// Could not be compared (the script would not run, a file would not
    /// read); the message says why.
    Error(String),
}

/// One `<testcase>`.
#[derive(Debug, Clone, PartialEq)]
pub struct JunitCase {
    /// The test's name (the baseline's file stem).
    pub name: String,
    /// Its class name (e.g. the baseline file's path).
    pub classname: String,
    /// Wall time, s.
    pub time_s: f64,
    /// The outcome.
    pub outcome: JunitOutcome,
    /// The full text report, written as `<system-out>`.
    pub output: String,
}

/// The XML text of one suite of `cases` named `suite` (e.g. the baseline
/// folder), stamped with `timestamp` (ISO 8601).
///
/// ```
/// use yawdyn::check::junit::{JunitCase, JunitOutcome, junit_xml};
/// let case = JunitCase {
///     name: "step_steer".into(),
///     classname: "results/baselines/step_steer.h5".into(),
///     time_s: 0.5,
///     outcome: JunitOutcome::Failed("2 items outside tolerance".into()),
///     output: String::new(),
/// };
/// let xml = junit_xml("results/baselines", "2026-01-01T00:00:00Z", &[case]);
/// assert!(xml.contains(r#"<testsuite name="results/baselines" tests="1" failures="1" errors="0""#));
/// ```
pub fn junit_xml(suite: &str, timestamp: &str, cases: &[JunitCase]) -> String {
    let count = |f: fn(&JunitOutcome) -> bool| cases.iter().filter(|c| f(&c.outcome)).count();
    let failures = count(|o| matches!(o, JunitOutcome::Failed(_)));
    let errors = count(|o| matches!(o, JunitOutcome::Error(_)));
    let time: f64 = cases.iter().map(|c| c.time_s).sum();
    let mut xml = String::from("<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n");
    xml.push_str(&format!(
        "<testsuites name=\"yawdyn check\" tests=\"{}\" failures=\"{failures}\" errors=\"{errors}\" time=\"{time:.3}\">\n",
        cases.len()
    ));
    xml.push_str(&format!(
        "  <testsuite name=\"{}\" tests=\"{}\" failures=\"{failures}\" errors=\"{errors}\" skipped=\"0\" time=\"{time:.3}\" timestamp=\"{}\">\n",
        escape(suite),
        cases.len(),
        escape(timestamp)
    ));
    for case in cases {
        xml.push_str(&format!(
            "    <testcase name=\"{}\" classname=\"{}\" time=\"{:.3}\">\n",
            escape(&case.name),
            escape(&case.classname),
            case.time_s
        ));
        match &case.outcome {
            JunitOutcome::Passed => {}
            JunitOutcome::Failed(message) => xml.push_str(&format!(
                "      <failure message=\"{}\" type=\"regression\">{}</failure>\n",
                escape(message),
                escape(message)
            )),
            JunitOutcome::Error(message) => xml.push_str(&format!(
                "      <error message=\"{}\" type=\"error\">{}</error>\n",
                escape(message),
                escape(message)
            )),
        }
        if !case.output.is_empty() {
            xml.push_str(&format!(
                "      <system-out>{}</system-out>\n",
                escape(&case.output)
            ));
        }
        xml.push_str("    </testcase>\n");
    }
    xml.push_str("  </testsuite>\n</testsuites>\n");
    xml
}

/// Writes `xml` to `path` atomically (temporary file, then rename).
pub fn write_junit(path: &Path, xml: &str) -> Result<(), ResultsError> {
    write_atomically(path, |temp| {
        std::fs::write(temp, xml).map_err(|source| ResultsError::Io {
            path: path.to_path_buf(),
            action: format!("writing the JUnit report to {}", temp.display()),
            source,
        })
    })
}

/// Text escaped for XML attributes and content; characters XML 1.0 does not
/// allow (control characters but tab and line breaks) become `?`.
fn escape(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for c in text.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&apos;"),
            '\t' | '\n' | '\r' => out.push(c),
            c if (c as u32) < 0x20 => out.push('?'),
            c => out.push(c),
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn special_characters_are_escaped() {
        assert_eq!(escape("a<b & \"c\"\u{1}"), "a&lt;b &amp; &quot;c&quot;?");
    }

    #[test]
    fn counts_and_elements_match_the_cases() {
        let case = |name: &str, outcome| JunitCase {
            name: name.into(),
            classname: format!("dir/{name}.h5"),
            time_s: 0.25,
            outcome,
            output: "report".into(),
        };
        let xml = junit_xml(
            "dir",
            "2026-01-01T00:00:00Z",
            &[
                case("a", JunitOutcome::Passed),
                case("b", JunitOutcome::Failed("off".into())),
                case("c", JunitOutcome::Error("no script".into())),
            ],
        );
        assert!(xml.contains("tests=\"3\" failures=\"1\" errors=\"1\" time=\"0.750\">"));
        assert_eq!(xml.matches("<testcase ").count(), 3);
        assert!(xml.contains("<failure message=\"off\" type=\"regression\">off</failure>"));
        assert!(xml.contains("<error message=\"no script\""));
        assert!(xml.contains("<system-out>report</system-out>"));
    }
}

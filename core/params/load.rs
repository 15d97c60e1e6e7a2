//! Reading a vehicle file: every problem at once, each with its key path and line.
//!
//! Strategy: parse the TOML text, apply `--set` overrides, then deserialize
//! with serde (the schema's single source of truth) while tracking the key path
//! of each error. After each error the offending entry is patched (an unknown
//! key removed, a missing or mistyped one replaced by a neutral placeholder) and
//! deserialization runs again, so one pass reports every schema problem. The
//! physical checks of [`Vehicle::from_file`] then run on the deserialized file.

use std::path::Path;

use super::issue::{ParamError, ParamIssue};
use super::vehicle::{Vehicle, VehicleFile};

/// Pseudo file name used for problems in `--set` overrides.
pub const OVERRIDE_SOURCE: &str = "<--set>";

/// How many patch-and-retry rounds before giving up (far more than any real file needs).
const MAX_ROUNDS: usize = 200;

/// A `key.path=value` override as given on the command line or by a script.
#[derive(Debug, Clone, PartialEq)]
pub struct Override {
    /// Dotted key path, e.g. `drive.front_share`.
    pub path: String,
    /// The value, parsed as a TOML value (`0.3`, `"open"`, `true`).
    pub value: toml::Value,
}

impl Override {
    /// Parses `key.path=value`. A value that is not valid TOML is taken as a string.
    pub fn parse(text: &str) -> Result<Self, ParamIssue> {
        let Some((path, value)) = text.split_once('=') else {
            return Err(ParamIssue::new(
                text,
                "an override must look like key.path=value",
            ));
        };
        let path = path.trim();
        if path.is_empty() || path.split('.').any(|s| s.trim().is_empty()) {
            return Err(ParamIssue::new(path, "empty key in override path"));
        }
        let raw = value.trim();
        let value = parse_value(raw).unwrap_or_else(|| toml::Value::String(raw.to_string()));
        Ok(Self {
            path: path.to_string(),
            value,
        })
    }

    /// The override as `key=value` text (for provenance).
    pub fn to_text(&self) -> String {
        format!("{}={}", self.path, self.value)
    }
}

fn parse_value(raw: &str) -> Option<toml::Value> {
    let doc: toml::Table = toml::from_str(&format!("v = {raw}")).ok()?;
    doc.get("v").cloned()
}

/// Loads, overrides and checks a vehicle file.
pub fn load_vehicle(path: &Path, overrides: &[Override]) -> Result<Vehicle, ParamError> {
    let text = super::input_file::read_vehicle_file(path)?;
    load_vehicle_text(&text, path, overrides)
}

/// Like [`load_vehicle`] but from text already in memory (`path` is used in messages).
pub fn load_vehicle_text(
    text: &str,
    path: &Path,
    overrides: &[Override],
) -> Result<Vehicle, ParamError> {
    let invalid = |issues| ParamError::Invalid {
        path: path.to_path_buf(),
        issues,
    };
    let mut table: toml::Table = match toml::from_str(text) {
        Ok(t) => t,
        Err(e) => return Err(invalid(vec![syntax_issue(text, &e)])),
    };
    let lines = KeyLines::new(text);
    let mut issues = Vec::new();
    let mut override_paths = Vec::new();
    for o in overrides {
        if let Err(msg) = set_path(&mut table, &o.path, o.value.clone()) {
            issues.push(ParamIssue {
                path: o.path.clone(),
                line: None,
                message: format!("override {}: {msg}", o.to_text()),
            });
        } else {
            override_paths.push(o.path.clone());
        }
    }
    let (file, mut schema_issues) = deserialize_collecting(table);
    for issue in &mut schema_issues {
        // A problem of an override (`--set`, `--vary`, the script's `set`)
        // names the override itself, whichever option gave it.
        let from = overrides.iter().rev().find(|o| o.path == issue.path);
        if let Some(o) = from.filter(|o| override_paths.contains(&o.path)) {
            issue.message = format!("(override `{}`) {}", o.to_text(), issue.message);
        } else {
            issue.line = lines.line_of(&issue.path);
        }
    }
    issues.extend(schema_issues);
    issues.sort_by_key(|i| i.line.unwrap_or(usize::MAX));
    let Some(file) = file else {
        return Err(invalid(issues));
    };
    if !issues.is_empty() {
        // Physical checks on a file patched with placeholders would only confuse.
        return Err(invalid(issues));
    }
    match Vehicle::from_file(file) {
        Ok(v) => Ok(v),
        Err(mut physical) => {
            for issue in &mut physical {
                issue.line = lines.line_of(&issue.path);
            }
            physical.sort_by_key(|i| i.line.unwrap_or(usize::MAX));
            Err(invalid(physical))
        }
    }
}

/// Sets `path` (dotted) in `table` to `value`, creating intermediate tables.
fn set_path(table: &mut toml::Table, path: &str, value: toml::Value) -> Result<(), String> {
    let mut parts: Vec<&str> = path.split('.').map(str::trim).collect();
    let last = parts.pop().ok_or("empty path")?;
    let mut current = table;
    for (i, part) in parts.iter().enumerate() {
        let entry = current
            .entry(part.to_string())
            .or_insert_with(|| toml::Value::Table(toml::Table::new()));
        current = match entry {
            toml::Value::Table(t) => t,
            _ => {
                return Err(format!(
                    "`{}` is a value, not a table",
                    parts[..=i].join(".")
                ));
            }
        };
    }
    current.insert(last.to_string(), value);
    Ok(())
}

fn walk_mut<'a>(table: &'a mut toml::Table, path: &[String]) -> Option<&'a mut toml::Table> {
    let mut current = table;
    for part in path {
        current = match current.get_mut(part)? {
            toml::Value::Table(t) => t,
            _ => return None,
        };
    }
    Some(current)
}

/// Deserializes, patching and retrying after each error; returns the file (if
/// deserialization finally succeeded) and the issues found on the way.
fn deserialize_collecting(mut table: toml::Table) -> (Option<VehicleFile>, Vec<ParamIssue>) {
    let mut issues: Vec<ParamIssue> = Vec::new();
    // Placeholder candidates tried in turn for a missing or mistyped key.
    let placeholders = || {
        [
            toml::Value::Float(1.0),
            toml::Value::String(String::new()),
            toml::Value::Table(toml::Table::new()),
            toml::Value::Boolean(false),
            toml::Value::Array(Vec::new()),
        ]
    };
    let mut patched: Vec<(Vec<String>, usize)> = Vec::new();
    for _ in 0..MAX_ROUNDS {
        let value = toml::Value::Table(table.clone());
        let err = match serde_path_to_error::deserialize::<_, VehicleFile>(value) {
            Ok(file) => return (Some(file), issues),
            Err(e) => e,
        };
        let mut segments: Vec<String> = err
            .path()
            .iter()
            .map(|s| s.to_string())
            .filter(|s| s != "?")
            .collect();
        let message = err.into_inner().message().to_string();
        if let Some(rest) = message.strip_prefix("unknown field `") {
            let key = rest.split('`').next().unwrap_or_default().to_string();
            if segments.last() != Some(&key) {
                segments.push(key.clone());
            }
            let expected = backticked(rest.split_once("expected").map_or("", |x| x.1));
            issues.push(ParamIssue::new(
                join_path(&segments),
                format!("unknown key `{key}`{}", suggestion(&key, &expected)),
            ));
            // A misspelt key whose closest known key is absent is read as
            // that key, so that it gives this one message rather than one per
            // key it should have held.
            let value =
                walk_mut(&mut table, &segments[..segments.len() - 1]).and_then(|t| t.remove(&key));
            if let (Some(value), Some(best)) = (value, closest(&key, &expected)) {
                if let Some(parent) = walk_mut(&mut table, &segments[..segments.len() - 1]) {
                    parent.entry(best).or_insert(value);
                }
            }
            continue;
        }
        if let Some(rest) = message.strip_prefix("missing field `") {
            let key = rest.split('`').next().unwrap_or_default().to_string();
            segments.push(key.clone());
            if !patched.iter().any(|(p, _)| p == &segments) {
                issues.push(ParamIssue::new(
                    join_path(&segments),
                    format!("missing key `{key}`"),
                ));
            }
        } else if let Some(array) = array_of_tables(&table, &segments) {
            // `[[chassis]]` where one `[chassis]` table is wanted: one
            // message, and the first table read in its place.
            issues.push(ParamIssue::new(
                array.clone(),
                format!(
                    "written as an array of tables (`[[{array}]]`); write it once as a table, `[{array}]`"
                ),
            ));
            let parts: Vec<String> = array.split('.').map(str::to_string).collect();
            let (last, parents) = parts.split_last().unwrap_or((&array, &[]));
            let Some(parent) = walk_mut(&mut table, parents) else {
                return (None, issues);
            };
            let first = match parent.get(last) {
                Some(toml::Value::Array(items)) => items.first().cloned(),
                _ => None,
            };
            parent.insert(
                last.clone(),
                first.unwrap_or(toml::Value::Table(toml::Table::new())),
            );
            continue;
        } else if !patched.iter().any(|(p, _)| p == &segments) {
            let friendly = friendly_message(&message);
            let expected = backticked(message.split_once("expected").map_or("", |x| x.1));
            let bad = message.split('`').nth(1).unwrap_or_default().to_string();
            let hint = if message.starts_with("unknown variant") {
                suggestion(&bad, &expected)
            } else {
                String::new()
            };
            issues.push(ParamIssue::new(
                join_path(&segments),
                format!("{friendly}{hint}"),
            ));
        }
        // Patch with the next placeholder for this path.
        let round = match patched.iter_mut().find(|(p, _)| p == &segments) {
            Some((_, n)) => {
                *n += 1;
                *n
            }
            None => {
                patched.push((segments.clone(), 0));
                0
            }
        };
        let Some((last, parents)) = segments.split_last() else {
            return (None, issues);
        };
        let candidates = placeholders();
        let variant_guess = enum_guess(&message);
        let value = match (round, variant_guess) {
            (0, Some(v)) => toml::Value::String(v),
            (n, _) if n < candidates.len() => candidates[n].clone(),
            _ => return (None, issues),
        };
        match walk_mut(&mut table, parents) {
            Some(t) => {
                t.insert(last.clone(), value);
            }
            None => return (None, issues),
        }
    }
    issues.push(ParamIssue::new(
        "",
        format!(
            "stopped looking after {MAX_ROUNDS} rounds of problems; there may be more: \
             fix these and load the file again"
        ),
    ));
    (None, issues)
}

fn enum_guess(message: &str) -> Option<String> {
    if message.starts_with("unknown variant") {
        backticked(message.split_once("expected").map_or("", |x| x.1))
            .into_iter()
            .next()
    } else {
        None
    }
}

/// The `backticked` words of a serde "expected one of `a`, `b`" list.
fn backticked(text: &str) -> Vec<String> {
    text.split('`')
        .enumerate()
        .filter(|(i, _)| i % 2 == 1)
        .map(|(_, s)| s.to_string())
        .collect()
}

/// serde's message in the words of the file: TOML kinds of value instead of
/// Rust type names (`a table`, not `struct ChassisFile`; `a number`, not
/// `f64`).
fn friendly_message(message: &str) -> String {
    if let Some(rest) = message.strip_prefix("invalid type: ") {
        let (found, expected) = rest.split_once(", expected ").unwrap_or((rest, ""));
        return format!(
            "wrong type: {} where {} is expected",
            toml_kind(found),
            toml_kind(expected)
        );
    }
    if let Some(rest) = message.strip_prefix("invalid value: ") {
        let (found, expected) = rest.split_once(", expected ").unwrap_or((rest, ""));
        return format!(
            "invalid value: {} where {} is expected",
            toml_kind(found),
            toml_kind(expected)
        );
    }
    message.replace("unknown variant", "unknown value")
}

/// A kind of value or an expected type in serde's words, as a TOML kind.
fn toml_kind(text: &str) -> String {
    let text = text.trim();
    let quoted = |t: &str| t.split('`').nth(1).map(str::to_string);
    if text.contains("variant") {
        return "one of the named values".to_string();
    }
    if text.starts_with("map") || text.starts_with("struct ") || text == "a map" {
        "a table".to_string()
    } else if text.starts_with("sequence")
        || text.starts_with("a sequence")
        || text.starts_with("tuple")
    {
        "an array".to_string()
    } else if text.starts_with("string") || text == "a string" || text == "a borrowed string" {
        match quoted(text).or_else(|| text.split('"').nth(1).map(str::to_string)) {
            Some(s) => format!("the text \"{s}\""),
            None => "text".to_string(),
        }
    } else if text.starts_with("floating point") || text.starts_with("integer") {
        match quoted(text) {
            Some(n) => format!("the number {n}"),
            None => "a number".to_string(),
        }
    } else if text.starts_with("boolean") || text == "a boolean" {
        "true or false".to_string()
    } else if matches!(text, "f64" | "f32" | "a float" | "a number") {
        "a number".to_string()
    } else if matches!(
        text,
        "u8" | "u16"
            | "u32"
            | "u64"
            | "u128"
            | "usize"
            | "i8"
            | "i16"
            | "i32"
            | "i64"
            | "i128"
            | "isize"
    ) {
        "a whole number".to_string()
    } else if text.contains("variant") || text.starts_with("enum ") {
        "one of the named values".to_string()
    } else {
        text.to_string()
    }
}

/// The key path of an array of tables on the way to `segments` (an error
/// inside `chassis[0]` when `chassis` is written `[[chassis]]`).
fn array_of_tables(table: &toml::Table, segments: &[String]) -> Option<String> {
    let mut current = table;
    let mut path = Vec::new();
    for s in segments {
        path.push(s.clone());
        match current.get(s)? {
            toml::Value::Table(t) => current = t,
            toml::Value::Array(items) if items.iter().all(toml::Value::is_table) => {
                return Some(path.join("."));
            }
            _ => return None,
        }
    }
    None
}

/// The candidate closest to `key`, if close enough to be a misspelling.
fn closest(key: &str, candidates: &[String]) -> Option<String> {
    candidates
        .iter()
        .map(|c| (strsim::jaro_winkler(key, c), c))
        .filter(|(s, _)| *s > 0.85)
        .max_by(|a, b| a.0.total_cmp(&b.0))
        .map(|(_, c)| c.clone())
}

/// A key path from its segments: `chassis.mass`, `tyre.front`, `chassis[0]`.
fn join_path(segments: &[String]) -> String {
    let mut path = String::new();
    for s in segments {
        if !path.is_empty() && !s.starts_with('[') {
            path.push('.');
        }
        path.push_str(s);
    }
    path
}

/// "; did you mean `x`?" for the closest candidate, plus the full list when short.
pub(crate) fn suggestion(key: &str, candidates: &[String]) -> String {
    let mut scored: Vec<(f64, &String)> = candidates
        .iter()
        .map(|c| (strsim::jaro_winkler(key, c), c))
        .collect();
    scored.sort_by(|a, b| b.0.total_cmp(&a.0));
    let close: Vec<String> = scored
        .iter()
        .filter(|(s, _)| *s > 0.7)
        .take(3)
        .map(|(_, c)| format!("`{c}`"))
        .collect();
    if close.is_empty() {
        if candidates.is_empty() {
            String::new()
        } else {
            let all: Vec<String> = candidates.iter().map(|c| format!("`{c}`")).collect();
            format!("; known keys here: {}", all.join(", "))
        }
    } else {
        format!("; did you mean {}?", close.join(" or "))
    }
}

/// A TOML syntax error as an issue: the key path of the line (from the
/// nearest table header and the key on that line), line and column, and
/// for a duplicate key the key's name.
fn syntax_issue(text: &str, error: &toml::de::Error) -> ParamIssue {
    let message = error.message().trim().to_string();
    let Some(span) = error.span() else {
        return ParamIssue::new("", format!("not valid TOML: {message}"));
    };
    let (line, column) = line_column(text, span.start);
    let path = KeyLines::new(text)
        .entries
        .iter()
        .rev()
        .find(|(_, l)| *l <= line)
        .map(|(k, _)| k.clone())
        .unwrap_or_default();
    let found = text
        .get(span.clone())
        .map(str::trim)
        .filter(|s| !s.is_empty() && s.len() < 80);
    let detail = match found {
        Some(key) if message.contains("duplicate key") => {
            format!("duplicate key `{}`", key.trim_matches('"'))
        }
        _ => message,
    };
    ParamIssue {
        path,
        line: Some(line),
        message: format!("not valid TOML (column {column}): {detail}"),
    }
}

/// 1-based line and column (in characters) of byte `offset` of `text`.
pub(crate) fn line_column(text: &str, offset: usize) -> (usize, usize) {
    let mut offset = offset.min(text.len());
    while !text.is_char_boundary(offset) {
        offset -= 1;
    }
    let before = &text[..offset];
    let line = before.matches('\n').count() + 1;
    let column = before.rsplit('\n').next().unwrap_or("").chars().count() + 1;
    (line, column)
}

/// Where each dotted key path appears in the file text (a light scan of
/// table headers and `key =` lines, enough for well-formed files).
struct KeyLines {
    entries: Vec<(String, usize)>,
}

impl KeyLines {
    fn new(text: &str) -> Self {
        let mut entries = Vec::new();
        let mut table = String::new();
        for (n, raw) in text.lines().enumerate() {
            let line = raw.trim();
            if line.starts_with('#') || line.is_empty() {
                continue;
            }
            if let Some(inner) = line.strip_prefix('[') {
                let name = inner.trim_start_matches('[');
                let name = name.split(']').next().unwrap_or_default();
                table = clean_key(name);
                entries.push((table.clone(), n + 1));
            } else if let Some((key, _)) = line.split_once('=') {
                let key = clean_key(key);
                let full = if table.is_empty() {
                    key
                } else {
                    format!("{table}.{key}")
                };
                entries.push((full, n + 1));
            }
        }
        Self { entries }
    }

    /// The line of `path`, or of its nearest parent that appears in the file.
    fn line_of(&self, path: &str) -> Option<usize> {
        let mut p = path.to_string();
        loop {
            if let Some((_, line)) = self.entries.iter().find(|(k, _)| *k == p) {
                return Some(*line);
            }
            match p.rfind('.') {
                Some(i) => p.truncate(i),
                None => return None,
            }
        }
    }
}

fn clean_key(key: &str) -> String {
    key.split('.')
        .map(|s| s.trim().trim_matches('"').trim_matches('\''))
        .collect::<Vec<_>>()
        .join(".")
}

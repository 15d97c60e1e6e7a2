//! The manoeuvre parameters a script reads, found in its compiled syntax
//! tree without running it: every call `param("name", default)` or
//! `param("name", default, "unit")` with a literal name. A call whose name is computed is refused with its position,
//! because then the names cannot be known before the run.

use std::path::Path;

use rhai::{AST, ASTNode, Expr};

use super::errors::position;
use crate::script::error::ScriptError;

/// The names of the `param("name", default)` calls in `ast`, each once: the
/// top level's in order of appearance, then those in the script's functions
/// and closures.
pub(crate) fn parameter_names(ast: &AST, path: &Path) -> Result<Vec<String>, ScriptError> {
    let mut names: Vec<String> = Vec::new();
    let mut computed = None;
    ast.walk(&mut |nodes: &[ASTNode]| {
        let (call, pos) = match nodes.last() {
            Some(ASTNode::Expr(Expr::FnCall(call, pos))) => (call, pos),
            // `"name".param(default)` is a call with a computed receiver.
            Some(ASTNode::Expr(Expr::MethodCall(call, pos))) if call.name == "param" => {
                computed = Some(*pos);
                return false;
            }
            _ => return true,
        };
        if call.name != "param" || !(2..=3).contains(&call.args.len()) || !call.namespace.is_empty()
        {
            return true;
        }
        match &call.args[0] {
            Expr::StringConstant(name, _) => {
                if !names.iter().any(|n| n == name.as_str()) {
                    names.push(name.to_string());
                }
                true
            }
            _ => {
                computed = Some(*pos);
                false
            }
        }
    });
    match computed {
        Some(pos) => Err(ScriptError::ParameterName {
            at: position(path, pos),
        }),
        None => Ok(names),
    }
}

/// The units the script declares for its parameters, `(name, unit)`, from
/// the calls `param("name", default, "unit")` with a literal unit (the first
/// such call of each name), in ASCII spelling ([`crate::units::ascii`]).
pub(crate) fn parameter_units(ast: &AST) -> Vec<(String, String)> {
    let mut units: Vec<(String, String)> = Vec::new();
    ast.walk(&mut |nodes: &[ASTNode]| {
        if let Some(ASTNode::Expr(Expr::FnCall(call, _))) = nodes.last()
            && call.name == "param"
            && call.namespace.is_empty()
            && let [
                Expr::StringConstant(name, _),
                _,
                Expr::StringConstant(unit, _),
            ] = &call.args[..]
            && !units.iter().any(|(n, _)| n == name.as_str())
        {
            units.push((name.to_string(), crate::units::ascii(unit)));
        }
        true
    });
    units
}

/// Error unless every given parameter name is one the script reads.
pub(crate) fn check_given<'a>(
    path: &Path,
    known: Vec<String>,
    given: impl IntoIterator<Item = &'a str>,
) -> Result<(), ScriptError> {
    let mut unknown: Vec<String> = Vec::new();
    for name in given {
        if !known.iter().any(|k| k == name) && !unknown.iter().any(|u| u == name) {
            unknown.push(name.to_string());
        }
    }
    if unknown.is_empty() {
        return Ok(());
    }
    Err(ScriptError::UnknownParameters {
        script: path.to_path_buf(),
        unknown,
        known,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn names(text: &str) -> Result<Vec<String>, ScriptError> {
        let ast = rhai::Engine::new().compile(text).unwrap();
        parameter_names(&ast, Path::new("t.rhai"))
    }

    /// Literal names anywhere (top level, functions, closures) are found
    /// once each; other functions called `param` with other arities are not
    /// the API's.
    #[test]
    fn literal_names_are_found_everywhere() {
        let text = r#"
            let r = param("radius", 50.0);
            let again = param("radius", 1);
            fn evaluate(ch) { metric("m", param("scale", 1.0)); }
            controller(|s| #{ drive: param("gain", 0.1) });
            fn param(x) { x }
        "#;
        let mut found = names(text).unwrap();
        assert_eq!(found[0], "radius");
        found.sort();
        assert_eq!(found, ["gain", "radius", "scale"]);
        assert!(names("let x = 1;").unwrap().is_empty());
    }

    /// Units come from the three-argument form, in ASCII spelling.
    #[test]
    fn units_come_from_the_third_argument() {
        let text = r#"
            let a = param("lat_accel", 5.0, "m/s²");
            let r = param("radius", 50.0);
            let t = param("torque", 1400.0, "N*m");
        "#;
        let ast = rhai::Engine::new().compile(text).unwrap();
        assert_eq!(
            parameter_units(&ast),
            [
                ("lat_accel".to_string(), "m/s^2".to_string()),
                ("torque".to_string(), "N*m".to_string())
            ]
        );
        assert_eq!(
            parameter_names(&ast, Path::new("t.rhai")).unwrap(),
            ["lat_accel", "radius", "torque"]
        );
    }

    /// A computed name is refused at its position.
    #[test]
    fn computed_names_are_refused_with_their_position() {
        let err = names("let n = \"radius\";\nlet r = param(n, 50.0);\n").unwrap_err();
        let text = err.to_string();
        assert!(text.starts_with("t.rhai:2:9:"), "{text}");
        assert!(text.contains("literal string"), "{text}");
        assert!(names("let r = \"radius\".param(50.0);").is_err());
    }

    #[test]
    fn unknown_given_names_are_listed_with_the_known_ones() {
        let given = ["radus", "radus"];
        let err = check_given(Path::new("t.rhai"), vec!["radius".into()], given).unwrap_err();
        let ScriptError::UnknownParameters { unknown, .. } = &err else {
            panic!("{err:?}");
        };
        assert_eq!(unknown, &["radus"], "each name once");
        assert!(check_given(Path::new("t.rhai"), vec!["radus".into()], given).is_ok());
    }
}

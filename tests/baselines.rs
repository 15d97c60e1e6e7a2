//! Regression: every shipped manoeuvre, run now on its default demo vehicle,
//! matches its stored baseline in `results/baselines/` within `yawdyn check`'s
//! default tolerances. After a deliberate model change, refresh with
//! `yawdyn check NEW.h5 --against results/baselines/NAME.h5 --update` (or
//! `yawdyn run scripts/NAME.rhai --out results/baselines/NAME.h5`) and commit
//! with a CHANGELOG entry.

mod common;

use common::{TempDir, repo_path};

#[test]
fn shipped_scripts_match_their_baselines() {
    let dir = TempDir::new();
    let mut scripts: Vec<_> = std::fs::read_dir(repo_path("scripts"))
        .unwrap()
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|p| p.extension().is_some_and(|x| x == "rhai"))
        .collect();
    scripts.sort();
    assert!(scripts.len() >= 9, "shipped scripts: {scripts:?}");
    let mut failures = Vec::new();
    for script in &scripts {
        let name = script.file_stem().unwrap().to_string_lossy().into_owned();
        let baseline = repo_path(&format!("results/baselines/{name}.h5"));
        assert!(
            baseline.exists(),
            "no baseline for {name}: {}",
            baseline.display()
        );
        let out = format!("{name}.h5");
        dir.yawdyn(["run", script.to_str().unwrap(), "--quiet", "--out", &out])
            .expect_code(0);
        let check = dir.yawdyn([
            "check",
            dir.join(&out).to_str().unwrap(),
            "--against",
            baseline.to_str().unwrap(),
        ]);
        if check.code != 0 {
            failures.push(format!("{name}:\n{}{}", check.stdout, check.stderr));
        }
    }
    assert!(failures.is_empty(), "regressions:\n{}", failures.join("\n"));
}

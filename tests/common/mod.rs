//! Shared helpers for the integration tests: run the real binary on spec text and read what
//! it printed and wrote.
#![allow(dead_code)]

pub mod rng;
pub mod server;

use assert_cmd::Command;
#[allow(unused_imports)]
pub use rng::Rng;
use std::path::{Path, PathBuf};

pub const BROMATE: &str = include_str!("../../plans/maple-hollow-bromate.toml");
pub const PERSULFATE: &str = include_str!("../../plans/quarry-lane-persulfate.toml");
pub const PEROXIDE: &str = include_str!("../../plans/willow-creek-peroxide-forecast.toml");
pub const WEEK: &str = include_str!("../../plans/birchfield-two-sections.toml");

/// What one run of the binary gave.
pub struct Outcome {
    pub code: i32,
    pub stdout: String,
    pub stderr: String,
    pub dir: tempfile::TempDir,
    pub spec: PathBuf,
}

impl Outcome {
    /// A file the command wrote, relative to its folder.
    pub fn file(&self, name: &str) -> Option<String> {
        std::fs::read_to_string(self.dir.path().join(name)).ok()
    }
}

/// `clockprep <command> SPEC <args…>` with the spec written to a fresh folder (which is also
/// the working directory, so relative output paths land there).
pub fn run(command: &str, spec_text: &str, args: &[&str]) -> Outcome {
    run_with(command, spec_text, &[], args)
}

/// As [`run`], with extra files written beside the spec first.
pub fn run_with(command: &str, spec_text: &str, files: &[(&str, &str)], args: &[&str]) -> Outcome {
    let dir = tempfile::tempdir().unwrap();
    let spec = dir.path().join("spec.toml");
    std::fs::write(&spec, spec_text).unwrap();
    for (name, text) in files {
        std::fs::write(dir.path().join(name), text).unwrap();
    }
    let out = Command::cargo_bin("clockprep")
        .unwrap()
        .current_dir(dir.path())
        .arg(command)
        .arg(&spec)
        .args(args)
        .output()
        .unwrap();
    Outcome {
        code: out.status.code().unwrap_or(-1),
        stdout: String::from_utf8_lossy(&out.stdout).into_owned(),
        stderr: String::from_utf8_lossy(&out.stderr).into_owned(),
        dir,
        spec,
    }
}

/// The demo with one piece of text replaced (which must be there).
pub fn edit(base: &str, from: &str, to: &str) -> String {
    assert!(base.contains(from), "the spec no longer contains {from:?}");
    base.replacen(from, to, 1)
}

/// True when `stderr` shows `file:line:col`, as miette prints a located error.
pub fn located(stderr: &str, file: &Path) -> bool {
    let file = file.display().to_string();
    let Some(at) = stderr.find(&format!("{file}:")) else {
        return false;
    };
    let rest = &stderr[at + file.len() + 1..];
    let mut parts = rest.splitn(3, |c: char| !c.is_ascii_digit());
    let line = parts.next().unwrap_or("");
    let col = parts.next().unwrap_or("");
    !line.is_empty() && !col.is_empty() && rest[line.len()..].starts_with(':')
}

/// Text with its line wrapping undone: whitespace runs and miette's `|` continuation marks
/// become one space, so a message can be matched however the terminal wrapped it.
pub fn flat(text: &str) -> String {
    text.split_whitespace()
        .filter(|w| *w != "|")
        .collect::<Vec<_>>()
        .join(" ")
}

/// True when `text` says `expect`, however it was wrapped.
pub fn says(text: &str, expect: &str) -> bool {
    flat(text).contains(&flat(expect))
}

/// Assert a refusal: exit 2, the message, a location in the spec and a hint.
pub fn assert_refused(o: &Outcome, expect: &str) {
    assert_eq!(o.code, 2, "expected exit 2:\n{}{}", o.stdout, o.stderr);
    assert!(
        says(&o.stderr, expect),
        "expected {expect:?} in\n{}",
        o.stderr
    );
    assert!(
        located(&o.stderr, &o.spec),
        "no file:line:col in\n{}",
        o.stderr
    );
    assert!(o.stderr.contains("help:"), "no hint in\n{}", o.stderr);
}

/// Run `command` on `base` with `from` replaced by `to`, and assert that it is refused with
/// `expect` (see [`assert_refused`]); the outcome is returned for further checks.
pub fn refuses(command: &str, base: &str, from: &str, to: &str, expect: &str) -> Outcome {
    let o = run(command, &edit(base, from, to), &[]);
    assert_refused(&o, expect);
    o
}

/// A number of the JSON output at a path such as `stock_recipes.0.grams`.
pub fn json(text: &str) -> serde_json::Value {
    serde_json::from_str(text).unwrap_or_else(|e| panic!("not JSON ({e}):\n{text}"))
}

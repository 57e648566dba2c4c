//! Helpers for the end-to-end tests: run the built binary in a fresh temporary folder.
#![allow(dead_code)]

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

/// The built `streetwood` binary.
pub fn binary() -> PathBuf {
    PathBuf::from(env!("CARGO_BIN_EXE_streetwood"))
}

/// Runs the binary in `dir` with `args`, never touching the user's home (HOME and XDG dirs point into
/// `dir`, and STREETWOOD_DB is cleared).
pub fn run(dir: &Path, args: &[&str]) -> Output {
    Command::new(binary())
        .args(args)
        .current_dir(dir)
        .env("HOME", dir)
        .env("XDG_DATA_HOME", dir.join("xdg-data"))
        .env_remove("STREETWOOD_DB")
        .output()
        .expect("the streetwood binary runs")
}

/// Stdout as text.
pub fn stdout(output: &Output) -> String {
    String::from_utf8_lossy(&output.stdout).into_owned()
}

/// Stderr as text.
pub fn stderr(output: &Output) -> String {
    String::from_utf8_lossy(&output.stderr).into_owned()
}

/// Creates an empty inventory `inv.db` in `dir` and returns its path as a string.
pub fn empty_inventory(dir: &Path) -> String {
    let path = dir.join("inv.db");
    let output = run(dir, &["init", path.to_str().expect("utf-8 path")]);
    assert!(output.status.success(), "init failed: {}", stderr(&output));
    path.to_string_lossy().into_owned()
}

/// The header of the trees exchange format (DESIGN.md).
pub const TREES_HEADER: &str = "uid,species,lon,lat,street,house_number,site_kind,planted_on,status,measured_on,dbh_cm,stems_cm,height_m,crown_base_m,crown_width_m,crown_width2_m,dieback_pct,condition,notes";

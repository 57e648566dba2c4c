//! Layer rules of DESIGN.md, checked on the source: SQL (rusqlite) only in `store/`, terminal crates
//! (ratatui, crossterm) only in `tui/`, and no I/O crates in the pure core.

use std::path::Path;

fn rust_files(dir: &Path, out: &mut Vec<std::path::PathBuf>) {
    for entry in std::fs::read_dir(dir).expect("read src").flatten() {
        let path = entry.path();
        if path.is_dir() {
            rust_files(&path, out);
        } else if path.extension().is_some_and(|e| e == "rs") {
            out.push(path);
        }
    }
}

fn files_mentioning(word: &str) -> Vec<String> {
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("src");
    let mut files = Vec::new();
    rust_files(&root, &mut files);
    files
        .into_iter()
        .filter(|f| std::fs::read_to_string(f).is_ok_and(|t| t.contains(word)))
        .map(|f| {
            f.strip_prefix(&root)
                .expect("under src")
                .to_string_lossy()
                .replace('\\', "/")
        })
        .collect()
}

#[test]
fn sql_lives_only_in_the_store() {
    for file in files_mentioning("rusqlite") {
        assert!(
            file.starts_with("store/"),
            "{file} uses rusqlite outside store/"
        );
    }
}

#[test]
fn terminal_crates_live_only_in_the_tui() {
    for word in ["ratatui", "crossterm"] {
        for file in files_mentioning(word) {
            assert!(file.starts_with("tui/"), "{file} uses {word} outside tui/");
        }
    }
}

#[test]
fn the_core_does_no_io() {
    for word in [
        "std::fs",
        "std::net",
        "std::process",
        "Utc::now",
        "Local::now",
        "SystemTime",
    ] {
        for file in files_mentioning(word) {
            for core in ["science/", "care/", "study/", "spatial.rs", "model.rs"] {
                assert!(!file.starts_with(core), "{file} (pure core) uses {word}");
            }
        }
    }
}

//! Benchmark (not a test): the TUI's cost per keystroke — input handling, fetching the visible rows and
//! drawing a 100×30 frame on ratatui's TestBackend — on a generated inventory (default 1,000,000 trees;
//! `STREETWOOD_BENCH_TREES` to change). Prints p50 / p99 / max per kind of key. Target (issue 4/8):
//! p99 < 16 ms. The generated inventory is cached in `target/bench-data/` after the first run.
//!
//! Run: `cargo bench --bench tui_keys`.

use std::path::PathBuf;
use std::time::{Duration, Instant};

use chrono::{TimeZone, Utc};
use ratatui::Terminal;
use ratatui::backend::TestBackend;
use ratatui::crossterm::event::{KeyCode, KeyEvent};
use streetwood::cli::synthetic::{GenOptions, generate};
use streetwood::store::Store;
use streetwood::store::trees::TreeImportRow;
use streetwood::tui::app::{App, AppSettings};
use streetwood::tui::query::Query;

fn inventory(trees: usize) -> PathBuf {
    let dir = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("target/bench-data");
    let path = dir.join(format!("tui-{trees}-seed1.db"));
    if path.exists() {
        return path;
    }
    std::fs::create_dir_all(&dir).expect("bench data folder");
    let partial = dir.join(format!("tui-{trees}-seed1.db.partial"));
    let _ = std::fs::remove_file(&partial);
    let started = Instant::now();
    let mut rows = Vec::new();
    generate(&GenOptions { trees, seed: 1 }, |record| {
        rows.push(TreeImportRow {
            line: rows.len() as u64 + 2,
            record: record.clone(),
            zone_id: None,
        });
        Ok(())
    })
    .expect("generate");
    let mut store = Store::open_or_create(&partial).expect("create");
    let now = Utc
        .with_ymd_and_hms(2026, 1, 1, 0, 0, 0)
        .single()
        .expect("time");
    store
        .import_trees(&rows, "bench", now, false)
        .expect("import");
    drop(store);
    std::fs::rename(&partial, &path).expect("rename");
    eprintln!(
        "generated {trees} trees into {} in {:.1?}",
        path.display(),
        started.elapsed()
    );
    path
}

fn percentile(sorted: &[Duration], p: f64) -> Duration {
    let index = ((sorted.len() as f64 - 1.0) * p).round() as usize;
    sorted[index.min(sorted.len() - 1)]
}

fn main() {
    let trees: usize = std::env::var("STREETWOOD_BENCH_TREES")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(1_000_000);
    let path = inventory(trees);
    // From opening the file (schema check included) to the first frame drawn.
    let opened = Instant::now();
    let mut store = Store::open_existing(&path).expect("open");
    let mut query = Query::new(&mut store);
    let today = chrono::NaiveDate::from_ymd_opt(2026, 1, 1).expect("date");
    // As the TUI starts: the index loads on another thread, the first frame does not wait for it.
    let mut app = App::new_loading(&mut query, AppSettings::default(), today).expect("app");
    let mut terminal = Terminal::new(TestBackend::new(100, 30)).expect("terminal");
    app.set_viewport(30);
    app.refresh(&mut query).expect("refresh");
    terminal.draw(|f| app.render(f)).expect("draw");
    let first_frame = opened.elapsed();
    while app.loading_roster.is_some() {
        std::thread::sleep(Duration::from_millis(5));
        app.refresh(&mut query).expect("refresh");
    }
    terminal.draw(|f| app.render(f)).expect("draw");
    let roster_ready = opened.elapsed();
    let now = Utc
        .with_ymd_and_hms(2026, 1, 1, 0, 0, 0)
        .single()
        .expect("time");

    let mut press = |app: &mut App, query: &mut Query<'_>, code: KeyCode| -> Duration {
        let start = Instant::now();
        app.on_key(KeyEvent::from(code), query, now);
        app.refresh(query).expect("refresh");
        terminal.draw(|f| app.render(f)).expect("draw");
        start.elapsed()
    };
    let mut results: Vec<(&str, Vec<Duration>)> = Vec::new();

    let mut scroll = Vec::new();
    for i in 0..2000 {
        let key = match i % 10 {
            0 => KeyCode::PageDown,
            9 => KeyCode::PageUp,
            _ => KeyCode::Down,
        };
        scroll.push(press(&mut app, &mut query, key));
    }
    scroll.push(press(&mut app, &mut query, KeyCode::End));
    scroll.push(press(&mut app, &mut query, KeyCode::Home));
    results.push(("scroll (j, PgDn, PgUp, End, Home)", scroll));

    let mut sort = Vec::new();
    for _ in 0..50 {
        sort.push(press(&mut app, &mut query, KeyCode::Char('s')));
        sort.push(press(&mut app, &mut query, KeyCode::Char('r')));
    }
    results.push(("sort (s next column, r reverse)", sort));

    let mut filter = Vec::new();
    for round in 0..5 {
        filter.push(press(&mut app, &mut query, KeyCode::Char('f')));
        for c in "street".chars() {
            filter.push(press(&mut app, &mut query, KeyCode::Char(c)));
        }
        filter.push(press(&mut app, &mut query, KeyCode::Enter));
        for c in format!("{} Ave", round + 2).chars() {
            filter.push(press(&mut app, &mut query, KeyCode::Char(c)));
        }
        filter.push(press(&mut app, &mut query, KeyCode::Enter));
        filter.push(press(&mut app, &mut query, KeyCode::Char('F')));
    }
    results.push(("filter (f, pick street, F clears)", filter));

    let mut search = Vec::new();
    for word in ["linden", "oak", "12 Street", "4e3e"] {
        search.push(press(&mut app, &mut query, KeyCode::Char('/')));
        for c in word.chars() {
            search.push(press(&mut app, &mut query, KeyCode::Char(c)));
        }
        search.push(press(&mut app, &mut query, KeyCode::Enter));
        search.push(press(&mut app, &mut query, KeyCode::Char('F')));
    }
    results.push(("search (/ and typing, per key)", search));

    println!("TUI per keystroke on {trees} trees (handle key + fetch visible rows + draw 100×30)");
    println!(
        "open to first frame: {:.1} ms (target < 300 ms); roster index loaded after {:.1} ms, off the UI thread",
        first_frame.as_secs_f64() * 1e3,
        roster_ready.as_secs_f64() * 1e3
    );
    println!(
        "{:<36} {:>6} {:>9} {:>9} {:>9}",
        "keys", "n", "p50 ms", "p99 ms", "max ms"
    );
    for (name, mut times) in results {
        times.sort();
        println!(
            "{:<36} {:>6} {:>9.2} {:>9.2} {:>9.2}",
            name,
            times.len(),
            percentile(&times, 0.5).as_secs_f64() * 1e3,
            percentile(&times, 0.99).as_secs_f64() * 1e3,
            times.last().map_or(0.0, |t| t.as_secs_f64() * 1e3)
        );
    }
}

//! `streetwood`: parse the command line, open the inventory, dispatch. Nothing else.

use std::process::ExitCode;

use clap::Parser;
use streetwood::cli::{self, Cli, CliError, Units};
use streetwood::store::Store;
use streetwood::tui;

fn main() -> ExitCode {
    let args = Cli::parse();
    let result = match &args.command {
        Some(cli::Command::Merge {
            other,
            dry_run,
            format,
            interactive: true,
        }) => cli::inventory_path(&args).and_then(|path| {
            cli::merge::merge_interactive(
                &path,
                other,
                *dry_run,
                *format,
                chrono::Utc::now(),
                tui::merge::choose_conflicts,
            )
        }),
        Some(command) => cli::run(&args, command, chrono::Utc::now()),
        None => open_tui(&args),
    };
    match result {
        Ok(()) => ExitCode::SUCCESS,
        Err(error) => {
            eprintln!("streetwood: {error:#}");
            ExitCode::from(error.exit_code())
        }
    }
}

fn open_tui(args: &Cli) -> Result<(), CliError> {
    let path = cli::inventory_path(args)?;
    let mut store = Store::open_existing(&path)?;
    // Today's backup runs beside the TUI on its own connection, so a large file opens at once; the TUI
    // waits for it only when it closes, and a failure is reported then (never over the screen).
    let backup_path = path.clone();
    let backup = std::thread::spawn(move || {
        Store::open_existing(&backup_path)
            .map_err(CliError::from)
            .and_then(|copy| rolling_backup(&copy, &backup_path))
    });
    let settings = tui::app::AppSettings {
        us_units: args.units == Some(Units::Us)
            || (args.units.is_none() && store.setting("units")?.as_deref() == Some("us")),
        no_color: std::env::var_os("NO_COLOR").is_some_and(|v| !v.is_empty()),
    };
    let result = tui::run(&mut store, settings).map_err(CliError::Other);
    if !backup.is_finished() {
        eprintln!("streetwood: finishing today's backup…");
    }
    match backup.join() {
        Ok(Ok(())) => {}
        Ok(Err(error)) => eprintln!("streetwood: warning: today's backup was not made: {error:#}"),
        Err(_) => eprintln!("streetwood: warning: today's backup stopped unexpectedly"),
    }
    result
}

/// Today's rolling backup of the file the TUI opens (setting `backup_keep`, default 7; 0 = none), in
/// `<data dir>/backups/<file stem>-<path hash>/` (`STREETWOOD_BACKUP_DIR` overrides the folder). A
/// failure is reported and the TUI opens anyway: the inventory itself is untouched.
fn rolling_backup(store: &Store, path: &std::path::Path) -> Result<(), CliError> {
    let keep = match store.setting("backup_keep")? {
        Some(value) => streetwood::settings::parse_backup_keep(&value).map_err(CliError::Input)?,
        None => streetwood::settings::DEFAULT_BACKUP_KEEP,
    };
    let dir = cli::rolling_backup_dir(path)?;
    store.rolling_backup(&dir, chrono::Local::now().date_naive(), keep)?;
    Ok(())
}

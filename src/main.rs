//! `streetwood`: parse the command line, open the inventory, dispatch. Nothing else.

use std::process::ExitCode;

use clap::Parser;
use streetwood::cli::{self, Cli, CliError, Units};
use streetwood::store::Store;
use streetwood::tui;

fn main() -> ExitCode {
    let args = Cli::parse();
    let result = match &args.command {
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
    let settings = tui::app::AppSettings {
        us_units: args.units == Some(Units::Us)
            || (args.units.is_none() && store.setting("units")?.as_deref() == Some("us")),
        no_color: std::env::var_os("NO_COLOR").is_some_and(|v| !v.is_empty()),
    };
    tui::run(&mut store, settings).map_err(CliError::Other)
}

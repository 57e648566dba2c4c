//! Streetwood: an offline street-tree inventory with benefits, care and removal studies.
//!
//! Layers (DESIGN.md): the pure core — [`science`], [`care`], [`spatial`] and the shared [`model`]
//! types — has no I/O; [`store`] is the only module with SQL; [`io`] reads and writes exchange formats;
//! `tui` and `cli` (in the binary's reach) are thin adapters over the core, the store and io.

pub mod care;
pub mod cli;
pub mod io;
pub mod model;
pub mod science;
pub mod settings;
pub mod spatial;
pub mod store;
pub mod tui;

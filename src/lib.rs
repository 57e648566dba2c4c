//! Streetwood: an offline street-tree inventory with benefits, care and removal studies.
//!
//! Layers (DESIGN.md): the pure core — [`science`], [`care`], [`study`], [`spatial`] and the shared [`model`]
//! types — has no I/O; [`store`] is the only module with SQL; [`io`] reads and writes exchange formats;
//! `tui` and `cli` (in the binary's reach) are thin adapters over the core, the store and io.

// Doc comments flag their sources as METHODS.md does — [published], [from memory], [derived] — which
// rustdoc would otherwise read as links.
#![allow(rustdoc::broken_intra_doc_links)]

pub mod care;
pub mod cli;
pub mod io;
pub mod model;
pub mod science;
pub mod settings;
pub mod spatial;
pub mod store;
pub mod study;
pub mod sync;
pub mod tui;

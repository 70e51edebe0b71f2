//! The integration tests, one crate (one test binary to build and link):
//! each module is one subject; `common` holds the shared helpers.

mod allowable;
mod cli;
mod closed_form;
mod common;
mod conduction;
mod curved;
mod discharge;
mod hostile;
mod losses;
mod meshcheck;
mod numerics;
mod properties;
mod review;
mod service;
mod singular;
mod snapshots;
mod solver;
mod sweep;
mod waivers;

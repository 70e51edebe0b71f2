//! The command's file and terminal side: what the library leaves to its
//! caller. `input` reads what the user names, `output` writes without
//! losing anything of the user's, `signals` makes interrupts truthful,
//! `memory` is the allocator.

pub mod input;
pub mod memory;
pub mod output;
pub mod signals;

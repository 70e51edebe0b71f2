//! Interrupts (SIGINT, SIGTERM, SIGHUP): stop at once, remove what this run
//! staged, and say truthfully which outputs are complete.
//!
//! Every write of an output happens while holding [`outputs`]' lock, and the
//! signal thread takes the same lock before it cleans up and exits, so an
//! interrupt never lands in the middle of a write or a review-folder swap:
//! each output is either as it was before the run or complete.

use std::path::PathBuf;
use std::sync::{Mutex, MutexGuard};

/// What this run has staged and completed, for the interrupt message.
#[derive(Debug, Default)]
pub struct Outputs {
    /// Staging folders of review folders being built (removed on interrupt).
    pub staged: Vec<PathBuf>,
    /// Outputs written completely, in words ("the review folder out/").
    pub complete: Vec<String>,
    /// Standard output has begun (it may be cut short).
    pub stdout_started: bool,
    /// An interrupt is being handled: write nothing more.
    pub stopping: bool,
}

static OUTPUTS: Mutex<Outputs> =
    Mutex::new(Outputs { staged: Vec::new(), complete: Vec::new(), stdout_started: false, stopping: false });

/// The run's outputs, locked: hold the guard for the whole of a write.
pub fn outputs() -> MutexGuard<'static, Outputs> {
    // A panic while holding the lock is a bug; the state is still usable.
    OUTPUTS.lock().unwrap_or_else(|e| e.into_inner())
}

/// The message printed on an interrupt, from what was done so far.
pub fn interrupt_message(signal: &str, o: &Outputs) -> String {
    let mut msg = format!("hvstack: interrupted ({signal}); ");
    if o.complete.is_empty() {
        msg.push_str("no output was written; earlier outputs are intact");
    } else {
        msg.push_str(&format!(
            "written completely before the interrupt: {}; nothing else was written and other earlier outputs are \
             intact",
            o.complete.join(", ")
        ));
    }
    if o.stdout_started {
        msg.push_str(" (standard output may be cut short)");
    }
    msg
}

/// Installs the handler: a thread waits for SIGINT, SIGTERM or SIGHUP,
/// takes the output lock, removes staged folders, prints what is complete
/// and exits with 128 + the signal number (130, 143, 129).
pub fn install() -> std::io::Result<()> {
    use signal_hook::consts::signal::{SIGHUP, SIGINT, SIGTERM};
    let mut signals = signal_hook::iterator::Signals::new([SIGINT, SIGTERM, SIGHUP])?;
    std::thread::Builder::new().name("hvstack-signals".into()).spawn(move || {
        if let Some(signal) = signals.forever().next() {
            let name = match signal {
                SIGINT => "SIGINT",
                SIGTERM => "SIGTERM",
                _ => "SIGHUP",
            };
            let mut o = outputs();
            o.stopping = true;
            for dir in o.staged.drain(..).collect::<Vec<_>>() {
                let _ = std::fs::remove_dir_all(&dir);
            }
            eprintln!("{}", interrupt_message(name, &o));
            std::process::exit(128 + signal);
        }
    })?;
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_message_says_what_is_complete() {
        let mut o = Outputs::default();
        assert!(interrupt_message("SIGINT", &o).contains("no output was written"));
        o.complete.push("the review folder out".into());
        let m = interrupt_message("SIGTERM", &o);
        assert!(m.contains("(SIGTERM)") && m.contains("the review folder out") && !m.contains("no output"));
    }
}

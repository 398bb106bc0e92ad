//! Progress on stderr: a bar (known total) or a spinner with a message,
//! drawn only on a terminal and never with `--quiet` (indicatif).

use indicatif::{ProgressBar, ProgressDrawTarget, ProgressStyle};
use std::io::IsTerminal;

/// A progress display for one long computation.
pub struct Progress {
    bar: ProgressBar,
}

impl Progress {
    fn target(quiet: bool) -> ProgressDrawTarget {
        if quiet || !std::io::stderr().is_terminal() {
            ProgressDrawTarget::hidden()
        } else {
            ProgressDrawTarget::stderr()
        }
    }

    /// A bar over `total` units named `unit` (e.g. "slices"), headed `what`.
    pub fn bar(what: &str, total: u64, unit: &str, quiet: bool) -> Progress {
        let bar = ProgressBar::with_draw_target(Some(total), Self::target(quiet));
        let style = ProgressStyle::with_template(&format!(
            "{what} [{{bar:30}}] {{pos}}/{{len}} {unit} ({{elapsed}}, eta {{eta}})"
        ))
        .unwrap_or_else(|_| ProgressStyle::default_bar())
        .progress_chars("=> ");
        bar.set_style(style);
        Progress { bar }
    }

    /// A spinner headed `what` whose message says what is being done.
    pub fn spinner(what: &str, quiet: bool) -> Progress {
        let bar = ProgressBar::with_draw_target(None, Self::target(quiet));
        let style = ProgressStyle::with_template(&format!("{{spinner}} {what}: {{msg}}"))
            .unwrap_or_else(|_| ProgressStyle::default_spinner());
        bar.set_style(style);
        Progress { bar }
    }

    /// Advances the bar by one unit.
    pub fn inc(&self) {
        self.bar.inc(1);
    }

    /// Sets the spinner's message.
    pub fn message(&self, msg: &str) {
        self.bar.set_message(msg.to_string());
        self.bar.tick();
    }

    /// Prints a line above the bar (or plainly when no bar is drawn),
    /// unless `quiet`.
    pub fn note(&self, quiet: bool, line: &str) {
        if !quiet {
            self.bar.suspend(|| eprintln!("{line}"));
        }
    }

    /// Removes the bar from the terminal.
    pub fn finish(&self) {
        self.bar.finish_and_clear();
    }
}

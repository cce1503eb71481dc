//! The progress bar of `inkling train`: the trainer's events drawn on stderr.

use indicatif::{ProgressBar, ProgressDrawTarget, ProgressStyle};
use inkling_train::{Memorising, Progress, StepReport};

/// A bar of steps with loss, held-out bits per byte, speed and time left; the memorising
/// warning printed above it.
pub struct StepBar {
    bar: ProgressBar,
}

impl StepBar {
    /// A bar for a run that ends at `steps`.
    pub fn new(steps: u64) -> Self {
        let bar = ProgressBar::with_draw_target(Some(steps), ProgressDrawTarget::stderr());
        bar.set_style(
            ProgressStyle::with_template("{elapsed_precise} [{bar:30}] step {pos}/{len} {msg}")
                .unwrap_or_else(|_| ProgressStyle::default_bar()),
        );
        StepBar { bar }
    }

    /// Removes the bar once the run is over.
    pub fn finish(&self) {
        self.bar.finish_and_clear();
    }
}

impl Progress for StepBar {
    fn started(&self, step: u64, _steps: u64) {
        self.bar.set_position(step);
    }

    fn step_done(&self, r: &StepReport) {
        let held = r
            .heldout_bits_per_byte
            .map_or("-".to_string(), |v| format!("{v:.3}"));
        self.bar.set_message(format!(
            "loss {:.3}, held-out {held} bits/byte, {:.0} B/s, ETA {}",
            r.train_bits_per_byte,
            r.bytes_per_second,
            clock(r.eta_seconds)
        ));
        self.bar.set_position(r.step);
    }

    fn memorising(&self, w: &Memorising) {
        self.bar.println(format!(
            "warning: held-out {:.3} bits/byte at step {} is above the best, {:.3} at step {}, \
             while the training loss fell from {:.3} to {:.3} bits/byte: the model is \
             memorising its training text. The checkpoint keeps step {}; more text, fewer \
             steps or a lower --lr help.",
            w.heldout_bits_per_byte,
            w.step,
            w.best_heldout_bits_per_byte,
            w.best_step,
            w.best_train_bits_per_byte,
            w.train_bits_per_byte,
            w.best_step
        ));
    }
}

/// "12:34" for a number of seconds.
fn clock(seconds: f64) -> String {
    let s = seconds.max(0.0).round() as u64;
    if s >= 3600 {
        format!("{}:{:02}:{:02}", s / 3600, s / 60 % 60, s % 60)
    } else {
        format!("{}:{:02}", s / 60, s % 60)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn clock_reads_minutes_and_hours() {
        assert_eq!(clock(75.4), "1:15");
        assert_eq!(clock(3725.0), "1:02:05");
        assert_eq!(clock(-3.0), "0:00");
    }
}

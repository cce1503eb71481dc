//! What a training run reports while it goes. The trainer prints nothing itself: the caller
//! shows these events (the `inkling` command draws a progress bar), or ignores them with `&()`.

/// One finished optimizer step.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct StepReport {
    /// Steps done in total (a resumed run counts its earlier steps).
    pub step: u64,
    /// Training loss of this step's batch, in bits per byte.
    pub train_bits_per_byte: f64,
    /// The latest held-out bits per byte (`None` before the first evaluation, or with
    /// nothing held out).
    pub heldout_bits_per_byte: Option<f64>,
    /// Training bytes (batch × sequence length) per second of this run so far.
    pub bytes_per_second: f64,
    /// Seconds left until `steps` or `seconds` ends the run, whichever comes first, at
    /// this run's pace so far.
    pub eta_seconds: f64,
}

/// Held-out loss rose while training loss fell: the model began to memorise its training
/// text. Reported once per run.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Memorising {
    /// The step of the evaluation that rose.
    pub step: u64,
    /// Its held-out bits per byte.
    pub heldout_bits_per_byte: f64,
    /// Training bits per byte then (mean of the last ≤ 100 steps).
    pub train_bits_per_byte: f64,
    /// The step the checkpoint keeps: the best held-out evaluation so far.
    pub best_step: u64,
    /// Held-out bits per byte at the best step.
    pub best_heldout_bits_per_byte: f64,
    /// Training bits per byte at the best step.
    pub best_train_bits_per_byte: f64,
}

/// Receives a training run's events, in order: `started`, then per step `step_done`
/// (and `checkpoint_saved` or `memorising` when they happen). Every method does nothing
/// unless implemented.
pub trait Progress {
    /// The run begins after `step` steps already done (nonzero on resume) and trains
    /// until `steps`.
    fn started(&self, step: u64, steps: u64) {
        let _ = (step, steps);
    }

    /// A step is done.
    fn step_done(&self, report: &StepReport) {
        let _ = report;
    }

    /// The model began to memorise (once per run).
    fn memorising(&self, warning: &Memorising) {
        let _ = warning;
    }

    /// The checkpoint file now holds the parameters of `step` (the best held-out step so
    /// far, or the latest step when nothing is held out).
    fn checkpoint_saved(&self, step: u64) {
        let _ = step;
    }
}

/// Reports nothing.
impl Progress for () {}

//! Progress reporting. The library never prints: long operations report
//! events to an observer that the caller supplies (the CLI draws a progress
//! bar; tests and library users may pass [`Silent`]).

/// Something that happened during training.
#[derive(Clone, Debug, PartialEq)]
#[non_exhaustive]
pub enum TrainEvent<'a> {
    /// A target's candidate search starts.
    SearchStarted {
        /// Target being trained.
        target: &'a str,
        /// Candidate networks planned so far.
        n_candidates: usize,
    },
    /// The hidden-unit range was widened because the best candidates sat at
    /// its top.
    RangeWidened {
        /// Target being trained.
        target: &'a str,
        /// New largest number of hidden units.
        max_hidden: usize,
        /// Candidate networks planned in all.
        n_candidates: usize,
    },
    /// One candidate network finished (or failed).
    CandidateDone {
        /// Target being trained.
        target: &'a str,
        /// Candidates finished so far.
        done: usize,
        /// Candidates planned.
        total: usize,
        /// Best held-out NLPD so far (target units), if any candidate succeeded.
        best_nlpd: Option<f64>,
    },
    /// The best candidates are being fitted with noise that varies with
    /// the inputs.
    NoiseModels {
        /// Target being trained.
        target: &'a str,
        /// Candidates given a noise network.
        n_candidates: usize,
    },
    /// A Gaussian process is being fitted to the committee's residuals.
    Kriging {
        /// Target being trained.
        target: &'a str,
        /// Rows the process is fitted on.
        n_rows: usize,
    },
    /// The chosen members are being refitted on all the data.
    Refitting {
        /// Target being trained.
        target: &'a str,
        /// Members to refit.
        n_members: usize,
    },
    /// A cross-validation fold's training starts (its training events
    /// follow).
    FoldStarted {
        /// Repeat, 1-based.
        repeat: usize,
        /// Repeats planned.
        n_repeats: usize,
        /// Fold, 1-based.
        fold: usize,
        /// Folds per repeat.
        n_folds: usize,
    },
    /// One partition's whole training of a target starts (only with more
    /// than one partition; its training events follow).
    PartitionStarted {
        /// Target being trained.
        target: &'a str,
        /// Partition, 1-based.
        partition: usize,
        /// Partitions planned.
        n_partitions: usize,
    },
    /// A target's committee is complete.
    TargetDone {
        /// Target trained.
        target: &'a str,
        /// Committee size.
        n_members: usize,
        /// Held-out NLPD of the chosen committee.
        heldout_nlpd: f64,
    },
}

/// Receives training events. Must be `Sync`: candidates train in parallel.
pub trait TrainObserver: Sync {
    /// Called for every event.
    fn observe(&self, event: &TrainEvent<'_>);
}

/// An observer that ignores everything.
#[derive(Clone, Copy, Debug, Default)]
pub struct Silent;

impl TrainObserver for Silent {
    fn observe(&self, _event: &TrainEvent<'_>) {}
}

/// Something that happened during a design search (`mettle design`).
#[derive(Clone, Debug, PartialEq)]
#[non_exhaustive]
pub enum DesignEvent {
    /// The search starts.
    Started {
        /// Searches (seeded starts) planned.
        n_starts: usize,
        /// Iterations per search.
        iterations: usize,
    },
    /// One seeded search finished.
    StartDone {
        /// Searches finished so far.
        done: usize,
        /// Searches planned.
        total: usize,
        /// Best score among feasible, in-domain points so far, if any.
        best_score: Option<f64>,
    },
    /// The diverse set is being chosen and polished.
    Choosing {
        /// Points evaluated in all.
        n_evaluated: usize,
    },
}

/// Receives design-search events.
pub trait DesignObserver: Sync {
    /// Called for every event.
    fn observe(&self, event: &DesignEvent);
}

impl DesignObserver for Silent {
    fn observe(&self, _event: &DesignEvent) {}
}

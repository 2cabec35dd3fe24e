//! A progress bar on stderr for training, drawn only when stderr is a
//! terminal and `--quiet` was not given, and only once training has run
//! for [`SHOW_AFTER`]: a short run leaves the terminal untouched.

use std::io::IsTerminal;
use std::sync::Mutex;
use std::time::{Duration, Instant};

use indicatif::{ProgressBar, ProgressDrawTarget, ProgressStyle};
use mettle::observer::{TrainEvent, TrainObserver};

/// How long training runs before the bar appears.
pub const SHOW_AFTER: Duration = Duration::from_secs(2);

/// Draws training progress.
pub struct TrainProgress {
    bar: Mutex<Option<ProgressBar>>,
    /// "fold 3/10 " while cross-validating, shown before the target.
    fold: Mutex<String>,
    /// "partition 2/3 " while training with several partitions.
    partition: Mutex<String>,
    enabled: bool,
    started: Instant,
}

impl TrainProgress {
    /// A progress reporter; silent when `quiet` or stderr is not a terminal.
    pub fn new(quiet: bool) -> Self {
        TrainProgress {
            bar: Mutex::new(None),
            fold: Mutex::new(String::new()),
            partition: Mutex::new(String::new()),
            enabled: !quiet && std::io::stderr().is_terminal(),
            started: Instant::now(),
        }
    }

    /// Remove the bar from the screen.
    pub fn finish(&self) {
        if let Some(bar) = self.bar.lock().unwrap_or_else(|p| p.into_inner()).take() {
            bar.finish_and_clear();
        }
    }
}

impl TrainObserver for TrainProgress {
    fn observe(&self, event: &TrainEvent<'_>) {
        if !self.enabled {
            return;
        }
        let mut guard = self.bar.lock().unwrap_or_else(|p| p.into_inner());
        if let Some(bar) = guard.as_ref() {
            if bar.is_hidden() && self.started.elapsed() >= SHOW_AFTER {
                bar.set_draw_target(ProgressDrawTarget::stderr());
            }
        }
        match event {
            TrainEvent::SearchStarted {
                target,
                n_candidates,
            } => {
                if let Some(old) = guard.take() {
                    old.finish_and_clear();
                }
                let bar = ProgressBar::with_draw_target(
                    Some(*n_candidates as u64),
                    ProgressDrawTarget::hidden(),
                );
                bar.set_style(
                    ProgressStyle::with_template(
                        "{prefix:>14} [{bar:30}] {pos}/{len} candidates  {msg}  ({eta} left)",
                    )
                    .unwrap_or_else(|_| ProgressStyle::default_bar())
                    .progress_chars("=> "),
                );
                let fold = self.fold.lock().unwrap_or_else(|p| p.into_inner());
                let part = self.partition.lock().unwrap_or_else(|p| p.into_inner());
                bar.set_prefix(format!("{fold}{part}{target}"));
                bar.enable_steady_tick(Duration::from_millis(250));
                *guard = Some(bar);
            }
            TrainEvent::RangeWidened {
                max_hidden,
                n_candidates,
                ..
            } => {
                if let Some(bar) = guard.as_ref() {
                    bar.set_length(*n_candidates as u64);
                    bar.println(format!("  best candidates at the top of the range: widening to {max_hidden} hidden units"));
                }
            }
            TrainEvent::CandidateDone {
                done, best_nlpd, ..
            } => {
                if let Some(bar) = guard.as_ref() {
                    bar.set_position(*done as u64);
                    if let Some(b) = best_nlpd {
                        bar.set_message(format!("best held-out NLPD {b:.3}"));
                    }
                }
            }
            TrainEvent::NoiseModels { n_candidates, .. } => {
                if let Some(bar) = guard.as_ref() {
                    bar.set_message(format!(
                        "fitting varying noise to the best {n_candidates} candidates"
                    ));
                }
            }
            TrainEvent::Kriging { n_rows, .. } => {
                if let Some(bar) = guard.as_ref() {
                    bar.set_message(format!("kriging the residuals of {n_rows} rows"));
                }
            }
            TrainEvent::Refitting { n_members, .. } => {
                if let Some(bar) = guard.as_ref() {
                    bar.set_message(format!("refitting {n_members} members on all rows"));
                }
            }
            TrainEvent::FoldStarted {
                repeat,
                n_repeats,
                fold,
                n_folds,
            } => {
                let mut f = self.fold.lock().unwrap_or_else(|p| p.into_inner());
                *f = if *n_repeats > 1 {
                    format!("repeat {repeat}/{n_repeats} fold {fold}/{n_folds} ")
                } else {
                    format!("fold {fold}/{n_folds} ")
                };
            }
            TrainEvent::PartitionStarted {
                target,
                partition,
                n_partitions,
            } => {
                let mut p = self.partition.lock().unwrap_or_else(|p| p.into_inner());
                *p = format!("partition {partition}/{n_partitions} ");
                if let Some(bar) = guard.as_ref() {
                    bar.println(format!(
                        "  {target}: partition {partition} of {n_partitions} (a whole training)"
                    ));
                }
            }
            TrainEvent::TargetDone { .. } => {
                if let Some(bar) = guard.take() {
                    bar.finish_and_clear();
                }
            }
            _ => {}
        }
    }
}

/// Draws design-search progress (same rules as [`TrainProgress`]: only on
/// a terminal, only without `--quiet`).
pub struct DesignProgress {
    bar: Mutex<Option<ProgressBar>>,
    enabled: bool,
}

impl DesignProgress {
    /// A progress reporter; silent when `quiet` or stderr is not a terminal.
    pub fn new(quiet: bool) -> Self {
        DesignProgress {
            bar: Mutex::new(None),
            enabled: !quiet && std::io::stderr().is_terminal(),
        }
    }
}

impl mettle::observer::DesignObserver for DesignProgress {
    fn observe(&self, event: &mettle::observer::DesignEvent) {
        use mettle::observer::DesignEvent;
        if !self.enabled {
            return;
        }
        let mut guard = self.bar.lock().unwrap_or_else(|p| p.into_inner());
        match event {
            DesignEvent::Started { n_starts, .. } => {
                let bar = ProgressBar::new(*n_starts as u64);
                bar.set_style(
                    ProgressStyle::with_template(
                        "{prefix:>14} [{bar:30}] {pos}/{len} searches  {msg}",
                    )
                    .unwrap_or_else(|_| ProgressStyle::default_bar())
                    .progress_chars("=> "),
                );
                bar.set_prefix("design");
                bar.enable_steady_tick(Duration::from_millis(250));
                *guard = Some(bar);
            }
            DesignEvent::StartDone {
                done, best_score, ..
            } => {
                if let Some(bar) = guard.as_ref() {
                    bar.set_position(*done as u64);
                    if let Some(b) = best_score {
                        bar.set_message(format!("best score {b:.4}"));
                    }
                }
            }
            DesignEvent::Choosing { .. } => {
                if let Some(bar) = guard.take() {
                    bar.finish_and_clear();
                }
            }
            _ => {}
        }
    }
}

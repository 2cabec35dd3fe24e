//! Training progress handed to a Python callable, one dict per event of
//! the library's observer ([`mettle::observer::TrainEvent`]). The events
//! come from the training threads while the GIL is released; each call
//! takes the GIL for the moment of the call. A callable that raises is
//! not called again (training goes on).

use std::sync::atomic::{AtomicBool, Ordering};

use mettle::observer::{TrainEvent, TrainObserver};
use pyo3::prelude::*;
use pyo3::types::PyDict;

/// Calls `callback(event: dict)` for every training event.
pub struct PyProgress {
    callback: Option<Py<PyAny>>,
    broken: AtomicBool,
}

impl PyProgress {
    /// An observer calling `callback`, or a silent one for `None`.
    pub fn new(callback: Option<Py<PyAny>>) -> PyProgress {
        PyProgress {
            callback,
            broken: AtomicBool::new(false),
        }
    }
}

fn fill<'py>(d: &Bound<'py, PyDict>, event: &TrainEvent<'_>) -> PyResult<()> {
    match event {
        TrainEvent::SearchStarted {
            target,
            n_candidates,
        } => {
            d.set_item("event", "search_started")?;
            d.set_item("target", *target)?;
            d.set_item("total", *n_candidates)?;
        }
        TrainEvent::RangeWidened {
            target,
            max_hidden,
            n_candidates,
        } => {
            d.set_item("event", "range_widened")?;
            d.set_item("target", *target)?;
            d.set_item("max_hidden", *max_hidden)?;
            d.set_item("total", *n_candidates)?;
        }
        TrainEvent::CandidateDone {
            target,
            done,
            total,
            best_nlpd,
        } => {
            d.set_item("event", "candidate_done")?;
            d.set_item("target", *target)?;
            d.set_item("done", *done)?;
            d.set_item("total", *total)?;
            d.set_item("best_nlpd", *best_nlpd)?;
        }
        TrainEvent::NoiseModels {
            target,
            n_candidates,
        } => {
            d.set_item("event", "noise_models")?;
            d.set_item("target", *target)?;
            d.set_item("total", *n_candidates)?;
        }
        TrainEvent::Kriging { target, n_rows } => {
            d.set_item("event", "kriging")?;
            d.set_item("target", *target)?;
            d.set_item("n_rows", *n_rows)?;
        }
        TrainEvent::Refitting { target, n_members } => {
            d.set_item("event", "refitting")?;
            d.set_item("target", *target)?;
            d.set_item("n_members", *n_members)?;
        }
        TrainEvent::FoldStarted {
            repeat,
            n_repeats,
            fold,
            n_folds,
        } => {
            d.set_item("event", "fold_started")?;
            d.set_item("repeat", *repeat)?;
            d.set_item("n_repeats", *n_repeats)?;
            d.set_item("fold", *fold)?;
            d.set_item("n_folds", *n_folds)?;
        }
        TrainEvent::PartitionStarted {
            target,
            partition,
            n_partitions,
        } => {
            d.set_item("event", "partition_started")?;
            d.set_item("target", *target)?;
            d.set_item("partition", *partition)?;
            d.set_item("n_partitions", *n_partitions)?;
        }
        TrainEvent::TargetDone {
            target,
            n_members,
            heldout_nlpd,
        } => {
            d.set_item("event", "target_done")?;
            d.set_item("target", *target)?;
            d.set_item("n_members", *n_members)?;
            d.set_item("heldout_nlpd", *heldout_nlpd)?;
        }
        _ => d.set_item("event", "other")?,
    }
    Ok(())
}

impl TrainObserver for PyProgress {
    fn observe(&self, event: &TrainEvent<'_>) {
        let Some(cb) = &self.callback else { return };
        if self.broken.load(Ordering::Relaxed) {
            return;
        }
        Python::attach(|py| {
            let d = PyDict::new(py);
            let called = fill(&d, event).and_then(|()| cb.call1(py, (d,)).map(|_| ()));
            if called.is_err() {
                self.broken.store(true, Ordering::Relaxed);
            }
        });
    }
}

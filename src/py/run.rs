//! The one road every long Rust computation takes from Python.
//!
//! [`run_long`] releases the GIL, runs the kernel on a worker thread (which may fan out over rayon's pool),
//! polls for Ctrl-C every few tens of milliseconds while it waits, asks the kernel to stop through its
//! [`Cancel`] token when the user interrupts, and maps [`CoreError`] to Python exceptions.
//! [`run_short`] is the same without the watcher thread, for vectorised kernels that finish quickly.

use std::sync::mpsc;
use std::time::Duration;

use pyo3::prelude::*;

use crate::error::{CoreError, CoreResult};
use crate::numerics::Cancel;

const POLL: Duration = Duration::from_millis(40);

/// Run `work` with the GIL released, watching for Ctrl-C; see the module docs.
pub fn run_long<T, F>(py: Python<'_>, work: F) -> PyResult<T>
where
    T: Send,
    F: FnOnce(&Cancel) -> CoreResult<T> + Send,
{
    let cancel = Cancel::new();
    let (outcome, signal) = py.detach(|| {
        std::thread::scope(|scope| {
            let (tx, rx) = mpsc::channel();
            let cancel_ref = &cancel;
            scope.spawn(move || {
                // The receiver outlives this thread inside the scope, so the send cannot fail.
                let _ = tx.send(work(cancel_ref));
            });
            let mut signal: Option<PyErr> = None;
            loop {
                match rx.recv_timeout(POLL) {
                    Ok(result) => return (result, signal),
                    Err(mpsc::RecvTimeoutError::Timeout) => {
                        if signal.is_none() {
                            if let Err(e) = Python::attach(|py| py.check_signals()) {
                                signal = Some(e);
                                cancel.request();
                            }
                        }
                    }
                    Err(mpsc::RecvTimeoutError::Disconnected) => {
                        // The worker panicked; surface it as an error instead of unwinding into Python.
                        return (
                            Err(CoreError::convergence(
                                "internal error: a worker thread stopped unexpectedly",
                                f64::NAN,
                            )),
                            signal,
                        );
                    }
                }
            }
        })
    });
    match (outcome, signal) {
        (Ok(v), None) => Ok(v),
        (Ok(_), Some(e)) | (Err(CoreError::Interrupted), Some(e)) => Err(e),
        (Err(e), _) => Err(e.into()),
    }
}

/// Run a quick kernel with the GIL released and map its error.
pub fn run_short<T, F>(py: Python<'_>, work: F) -> PyResult<T>
where
    T: Send,
    F: FnOnce() -> CoreResult<T> + Send,
{
    py.detach(work).map_err(PyErr::from)
}

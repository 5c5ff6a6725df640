//! Cooperative cancellation of long computations.
//!
//! The core never talks to Python. A long kernel receives a [`Cancel`] token and calls
//! [`Cancel::check`] between chunks of work; the binding layer sets the token when the user presses Ctrl-C.

use std::sync::atomic::{AtomicBool, AtomicUsize, Ordering};

use crate::error::{CoreError, CoreResult};

/// A flag shared between a running kernel and whoever may ask it to stop, plus a progress counter.
#[derive(Debug, Default)]
pub struct Cancel {
    stop: AtomicBool,
    done: AtomicUsize,
}

impl Cancel {
    /// A token that has not been set.
    pub fn new() -> Self {
        Self::default()
    }

    /// Ask the kernel to stop at its next check.
    pub fn request(&self) {
        self.stop.store(true, Ordering::Relaxed);
    }

    /// Whether a stop was requested.
    pub fn requested(&self) -> bool {
        self.stop.load(Ordering::Relaxed)
    }

    /// Return [`CoreError::Interrupted`] if a stop was requested.
    pub fn check(&self) -> CoreResult<()> {
        if self.requested() {
            Err(CoreError::Interrupted)
        } else {
            Ok(())
        }
    }

    /// Record `n` more units of finished work (read by progress reporting).
    pub fn advance(&self, n: usize) {
        self.done.fetch_add(n, Ordering::Relaxed);
    }

    /// Units of work finished so far.
    pub fn progress(&self) -> usize {
        self.done.load(Ordering::Relaxed)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn check_fails_only_after_request() {
        let c = Cancel::new();
        assert!(c.check().is_ok());
        c.advance(3);
        assert_eq!(c.progress(), 3);
        c.request();
        assert_eq!(c.check(), Err(CoreError::Interrupted));
    }
}

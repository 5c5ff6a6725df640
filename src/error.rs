//! The one error type of the Rust core.
//!
//! Every fallible function of every stage returns [`CoreError`]. The binding layer maps each variant to one
//! Python exception class (`fluxfunnel.InputError`, `fluxfunnel.ConvergenceError`, `KeyboardInterrupt`).

use thiserror::Error;

/// Errors raised by the core.
#[derive(Debug, Error, Clone, PartialEq)]
pub enum CoreError {
    /// An argument is unusable: `arg` names it, `what` says what is wrong with it.
    #[error("{arg}: {what}")]
    Input {
        /// Name of the offending argument, as the Python caller spells it.
        arg: String,
        /// What is wrong with it (shape, dtype, NaN, sign, ordering, ...).
        what: String,
    },
    /// An iterative method did not converge; `residual` is the last residual reached.
    #[error("{what} (residual {residual:.3e})")]
    Convergence {
        /// What failed to converge and after how many iterations.
        what: String,
        /// The last residual, in the method's own norm.
        residual: f64,
    },
    /// The user interrupted the computation (Ctrl-C).
    #[error("interrupted by the user")]
    Interrupted,
}

impl CoreError {
    /// Shorthand for an [`CoreError::Input`] error.
    pub fn input(arg: impl Into<String>, what: impl Into<String>) -> Self {
        CoreError::Input {
            arg: arg.into(),
            what: what.into(),
        }
    }

    /// Shorthand for a [`CoreError::Convergence`] error.
    pub fn convergence(what: impl Into<String>, residual: f64) -> Self {
        CoreError::Convergence {
            what: what.into(),
            residual,
        }
    }
}

/// Result type of the core.
pub type CoreResult<T> = Result<T, CoreError>;

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn messages_name_the_argument() {
        let e = CoreError::input("mass", "must be positive, got -1");
        assert_eq!(e.to_string(), "mass: must be positive, got -1");
        let c = CoreError::convergence("steady state after 50 iterations", 1.5e-3);
        assert!(c.to_string().contains("1.500e-3"));
    }
}

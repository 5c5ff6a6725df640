//! Vertical structure of a thin disk: steady field-line bending and flux transport speeds
//! ([`bend`]), and a time-dependent one-dimensional mean-field column model ([`column`]).
//!
//! Units are CGS throughout: heights in cm, diffusivities in cm^2 s^-1, velocities in cm s^-1, fields in G.

pub mod bend;
pub mod column;
pub mod quad;
pub mod tridiag;

pub use bend::{bend_columns, Bending, Surface};
pub use column::{advance, ColumnSpec, ColumnState, Quenching};

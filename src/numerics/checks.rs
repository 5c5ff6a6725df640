//! Argument checks used by every stage; each error names the argument.

use crate::error::{CoreError, CoreResult};

/// Every value finite.
pub fn finite<'a>(arg: &str, values: impl IntoIterator<Item = &'a f64>) -> CoreResult<()> {
    for (i, v) in values.into_iter().enumerate() {
        if !v.is_finite() {
            return Err(CoreError::input(
                arg,
                format!("must be finite, found {v} at flat index {i}"),
            ));
        }
    }
    Ok(())
}

/// Every value finite and strictly positive.
pub fn positive<'a>(arg: &str, values: impl IntoIterator<Item = &'a f64>) -> CoreResult<()> {
    for (i, v) in values.into_iter().enumerate() {
        if !v.is_finite() || *v <= 0.0 {
            return Err(CoreError::input(
                arg,
                format!("must be finite and positive, found {v} at flat index {i}"),
            ));
        }
    }
    Ok(())
}

/// Every value finite and not negative.
pub fn non_negative<'a>(arg: &str, values: impl IntoIterator<Item = &'a f64>) -> CoreResult<()> {
    for (i, v) in values.into_iter().enumerate() {
        if !v.is_finite() || *v < 0.0 {
            return Err(CoreError::input(
                arg,
                format!("must be finite and non-negative, found {v} at flat index {i}"),
            ));
        }
    }
    Ok(())
}

/// A grid: finite, at least `min_len` points, strictly increasing.
pub fn increasing(arg: &str, grid: &[f64], min_len: usize) -> CoreResult<()> {
    if grid.len() < min_len {
        return Err(CoreError::input(
            arg,
            format!("needs at least {min_len} points, got {}", grid.len()),
        ));
    }
    finite(arg, grid)?;
    for i in 1..grid.len() {
        if grid[i] <= grid[i - 1] {
            return Err(CoreError::input(
                arg,
                format!(
                    "must be strictly increasing, but element {i} ({}) <= element {} ({})",
                    grid[i],
                    i - 1,
                    grid[i - 1]
                ),
            ));
        }
    }
    Ok(())
}

/// Two lengths must agree.
pub fn same_len(arg: &str, len: usize, other: &str, other_len: usize) -> CoreResult<()> {
    if len != other_len {
        return Err(CoreError::input(
            arg,
            format!("has length {len} but {other} has length {other_len}"),
        ));
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn each_check_names_the_argument() {
        assert!(finite("x", &[1.0, 2.0]).is_ok());
        let e = finite("x", &[1.0, f64::NAN]).unwrap_err();
        assert!(e.to_string().starts_with("x: must be finite"));
        assert!(positive("mass", &[0.0]).is_err());
        assert!(non_negative("rho", &[0.0]).is_ok());
        assert!(non_negative("rho", &[-1e-30]).is_err());
        assert!(increasing("r", &[1.0, 2.0, 3.0], 2).is_ok());
        let e = increasing("r", &[1.0, 3.0, 2.0], 2).unwrap_err();
        assert!(e.to_string().contains("strictly increasing"));
        assert!(increasing("r", &[1.0], 2).is_err());
        assert!(same_len("a", 3, "b", 4).is_err());
    }
}

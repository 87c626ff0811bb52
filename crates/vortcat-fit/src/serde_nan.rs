//! Deserialisers that read JSON `null` back as NaN.
//!
//! JSON has no NaN or infinity; `serde_json` writes them as `null`. Undefined statistics
//! (standard errors of a singular fit, R² of a constant field, an infinite condition number)
//! therefore come back as `null`, and these helpers turn them into NaN so that every result
//! that was written can be read again. Infinity also reads back as NaN.

use serde::{Deserialize, Deserializer};

fn nan(v: Option<f64>) -> f64 {
    v.unwrap_or(f64::NAN)
}

/// `f64`, `null` → NaN.
pub(crate) fn f64<'de, D: Deserializer<'de>>(d: D) -> Result<f64, D::Error> {
    Ok(nan(Option::<f64>::deserialize(d)?))
}

/// `[f64; 2]`.
pub(crate) fn arr2<'de, D: Deserializer<'de>>(d: D) -> Result<[f64; 2], D::Error> {
    let a = <[Option<f64>; 2]>::deserialize(d)?;
    Ok([nan(a[0]), nan(a[1])])
}

/// `Option<[f64; 3]>`.
pub(crate) fn opt_arr3<'de, D: Deserializer<'de>>(d: D) -> Result<Option<[f64; 3]>, D::Error> {
    let a = Option::<[Option<f64>; 3]>::deserialize(d)?;
    Ok(a.map(|a| [nan(a[0]), nan(a[1]), nan(a[2])]))
}

/// `Vec<f64>`.
pub(crate) fn vec<'de, D: Deserializer<'de>>(d: D) -> Result<Vec<f64>, D::Error> {
    Ok(Vec::<Option<f64>>::deserialize(d)?
        .into_iter()
        .map(nan)
        .collect())
}

/// `Vec<Vec<f64>>`.
pub(crate) fn mat<'de, D: Deserializer<'de>>(d: D) -> Result<Vec<Vec<f64>>, D::Error> {
    Ok(Vec::<Vec<Option<f64>>>::deserialize(d)?
        .into_iter()
        .map(|r| r.into_iter().map(nan).collect())
        .collect())
}

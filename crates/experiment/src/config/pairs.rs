//! Reading fixed-length number pairs (`[lo, hi]`, `[east, north]`) so that a list of the wrong
//! length is an error (serde's array support would silently drop extra entries).

use serde::de::{Deserialize, Deserializer, Error};

fn to_pair<E: Error>(values: Vec<f64>) -> Result<[f64; 2], E> {
    match values.as_slice() {
        [a, b] => Ok([*a, *b]),
        _ => Err(E::invalid_length(values.len(), &"a list of exactly 2 numbers")),
    }
}

/// Deserializes `[a, b]`, rejecting any other length.
pub(crate) fn pair<'de, D: Deserializer<'de>>(deserializer: D) -> Result<[f64; 2], D::Error> {
    to_pair(Vec::<f64>::deserialize(deserializer)?)
}

/// Deserializes `[[a, b], [c, d], ...]`, rejecting inner lists of any other length.
pub(crate) fn pairs<'de, D: Deserializer<'de>>(deserializer: D) -> Result<Vec<[f64; 2]>, D::Error> {
    Vec::<Vec<f64>>::deserialize(deserializer)?.into_iter().map(to_pair).collect()
}

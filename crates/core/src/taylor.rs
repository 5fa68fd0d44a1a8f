/// Taylor weight of a channel for Taylor term `t`: w_t(ν) = ((ν − ν0) / ν0)^t.
///
/// This is the expansion variable of multi-term multi-frequency synthesis (Rau & Cornwell 2011,
/// A&A 532, A71, eq. 9): a sky spectrum I(ν) = Σ_t I_t w_t(ν).
pub fn taylor_weight(freq_hz: f64, ref_freq_hz: f64, term: usize) -> f64 {
    ((freq_hz - ref_freq_hz) / ref_freq_hz).powi(term as i32)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn weights_by_definition() {
        // Direct evaluation of the definition ((ν−ν0)/ν0)^t, Rau & Cornwell (2011) eq. 9.
        assert_eq!(taylor_weight(1.2e9, 1.5e9, 0), 1.0);
        assert!((taylor_weight(1.2e9, 1.5e9, 1) + 0.2).abs() < 1e-15);
        assert!((taylor_weight(1.2e9, 1.5e9, 2) - 0.04).abs() < 1e-15);
        assert!((taylor_weight(1.8e9, 1.5e9, 3) - 0.008).abs() < 1e-15);
    }
}

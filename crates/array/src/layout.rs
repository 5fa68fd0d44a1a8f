use crate::error::{check_range, ArrayError};

/// A validated set of antenna positions in local east-north-up metres.
///
/// Holding a `Layout` guarantees: at least two antennas, finite coordinates, and no two antennas
/// closer (in 3-D) than the minimum spacing it was built with. The origin is the array's
/// reference point; only differences of positions (baselines) matter downstream.
#[derive(Clone, Debug, PartialEq)]
pub struct Layout {
    antennas_enu_m: Vec<[f64; 3]>,
    min_spacing_m: f64,
}

impl Layout {
    /// Validate `antennas_enu_m` (east, north, up in metres) against `min_spacing_m`.
    ///
    /// Errors: [`ArrayError::TooFewAntennas`] for fewer than 2, [`ArrayError::NonFiniteAntenna`]
    /// for a NaN or infinite coordinate, [`ArrayError::AntennasTooClose`] for the first pair (in
    /// index order) closer than `min_spacing_m`, and [`ArrayError::InvalidParameter`] when
    /// `min_spacing_m` is negative or not finite. The pair check is all-pairs, O(N²), which is
    /// microseconds for the few hundred antennas of a dish array.
    pub fn new(antennas_enu_m: Vec<[f64; 3]>, min_spacing_m: f64) -> Result<Self, ArrayError> {
        check_range("min_spacing_m", min_spacing_m, 0.0, f64::MAX, "a finite value >= 0 m")?;
        if antennas_enu_m.len() < 2 {
            return Err(ArrayError::TooFewAntennas { found: antennas_enu_m.len() });
        }
        for (antenna, p) in antennas_enu_m.iter().enumerate() {
            if p.iter().any(|c| !c.is_finite()) {
                return Err(ArrayError::NonFiniteAntenna { antenna, position_enu_m: *p });
            }
        }
        for a in 0..antennas_enu_m.len() {
            for b in a + 1..antennas_enu_m.len() {
                let d = distance(antennas_enu_m[a], antennas_enu_m[b]);
                if d < min_spacing_m {
                    return Err(ArrayError::AntennasTooClose {
                        antenna_a: a,
                        antenna_b: b,
                        distance_m: d,
                        min_spacing_m,
                    });
                }
            }
        }
        Ok(Self { antennas_enu_m, min_spacing_m })
    }

    /// Parse a layout text (see [`parse_enu_text`]) and validate it with `min_spacing_m`.
    pub fn from_text(text: &str, min_spacing_m: f64) -> Result<Self, ArrayError> {
        Self::new(parse_enu_text(text)?, min_spacing_m)
    }

    /// Antenna positions, east/north/up metres, in input order.
    pub fn antennas_enu_m(&self) -> &[[f64; 3]] {
        &self.antennas_enu_m
    }

    /// The minimum spacing the layout was validated against, m.
    pub fn min_spacing_m(&self) -> f64 {
        self.min_spacing_m
    }

    /// Number of antennas (always at least 2).
    pub fn n_antennas(&self) -> usize {
        self.antennas_enu_m.len()
    }

    /// Smallest distance between any two antennas, m (3-D).
    pub fn shortest_spacing_m(&self) -> f64 {
        self.pair_distances().fold(f64::INFINITY, f64::min)
    }

    /// Largest distance between any two antennas, m (3-D): the longest baseline.
    pub fn longest_baseline_m(&self) -> f64 {
        self.pair_distances().fold(0.0, f64::max)
    }

    /// The positions, consuming the layout.
    pub fn into_antennas_enu_m(self) -> Vec<[f64; 3]> {
        self.antennas_enu_m
    }

    fn pair_distances(&self) -> impl Iterator<Item = f64> + '_ {
        let p = &self.antennas_enu_m;
        (0..p.len()).flat_map(move |a| (a + 1..p.len()).map(move |b| distance(p[a], p[b])))
    }
}

/// Euclidean distance between two positions, m.
pub(crate) fn distance(a: [f64; 3], b: [f64; 3]) -> f64 {
    ((a[0] - b[0]).powi(2) + (a[1] - b[1]).powi(2) + (a[2] - b[2]).powi(2)).sqrt()
}

/// Read antenna positions from text: one antenna per line as three numbers `east north up` in
/// metres, separated by white space or commas.
///
/// `#` starts a comment that runs to the end of the line; blank lines (and lines holding only a
/// comment) are skipped. A line with other than three numbers, or with a number that does not
/// parse or is not finite, is an [`ArrayError::LayoutParse`] carrying the one-based line number
/// and the line's text. This only reads; [`Layout::new`] validates the result.
pub fn parse_enu_text(text: &str) -> Result<Vec<[f64; 3]>, ArrayError> {
    let mut positions = Vec::new();
    for (i, raw) in text.lines().enumerate() {
        let content = raw.split('#').next().unwrap_or("").trim();
        if content.is_empty() {
            continue;
        }
        let fail =
            |reason: String| ArrayError::LayoutParse { line: i + 1, text: raw.to_string(), reason };
        let fields: Vec<&str> = content
            .split(|c: char| c.is_whitespace() || c == ',')
            .filter(|f| !f.is_empty())
            .collect();
        if fields.len() != 3 {
            return Err(fail(format!(
                "expected 3 numbers (east north up, metres), found {} fields",
                fields.len()
            )));
        }
        let mut p = [0.0; 3];
        for (k, field) in fields.iter().enumerate() {
            let v: f64 = field.parse().map_err(|_| fail(format!("`{field}` is not a number")))?;
            if !v.is_finite() {
                return Err(fail(format!("`{field}` is not a finite number")));
            }
            p[k] = v;
        }
        positions.push(p);
    }
    Ok(positions)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn parses_comments_blanks_and_separators() {
        let text =
            "# east north up\n\n 0 0 0\n10.5, -3 1 # second dish\n\t-7e1 2.5e0 0.25\n   # end\n";
        let p = parse_enu_text(text).unwrap();
        assert_eq!(p, vec![[0.0, 0.0, 0.0], [10.5, -3.0, 1.0], [-70.0, 2.5, 0.25]]);
    }

    #[test]
    fn parse_errors_carry_line_and_text() {
        let err = parse_enu_text("0 0 0\n\n1 2\n").unwrap_err();
        match err {
            ArrayError::LayoutParse { line, text, .. } => {
                assert_eq!(line, 3);
                assert_eq!(text, "1 2");
            }
            other => panic!("unexpected {other:?}"),
        }
        let err = parse_enu_text("# hdr\n0 0 0\n4 five 6 # typo\n").unwrap_err();
        assert!(
            matches!(&err, ArrayError::LayoutParse { line: 3, text, .. } if text == "4 five 6 # typo")
        );
        assert!(err.to_string().contains("`five` is not a number"), "{err}");
        let err = parse_enu_text("1 2 3 4\n").unwrap_err();
        assert!(matches!(err, ArrayError::LayoutParse { line: 1, .. }));
        let err = parse_enu_text("1 inf 3\n").unwrap_err();
        assert!(matches!(err, ArrayError::LayoutParse { line: 1, .. }));
    }

    #[test]
    fn validation() {
        assert_eq!(
            Layout::from_text("# only one\n0 0 0\n", 0.0),
            Err(ArrayError::TooFewAntennas { found: 1 })
        );
        assert!(matches!(
            Layout::new(vec![[0.0; 3], [f64::NAN, 0.0, 0.0]], 0.0),
            Err(ArrayError::NonFiniteAntenna { antenna: 1, .. })
        ));
        // 3-4-5 triangle: antennas 1 and 2 are exactly 5 m apart.
        let p = vec![[0.0, 0.0, 0.0], [30.0, 0.0, 0.0], [33.0, 4.0, 0.0]];
        match Layout::new(p.clone(), 6.0) {
            Err(ArrayError::AntennasTooClose {
                antenna_a: 1, antenna_b: 2, distance_m, ..
            }) => {
                assert!((distance_m - 5.0).abs() < 1e-12)
            }
            other => panic!("unexpected {other:?}"),
        }
        let l = Layout::new(p, 5.0).unwrap();
        assert_eq!(l.n_antennas(), 3);
        assert!((l.shortest_spacing_m() - 5.0).abs() < 1e-12);
        assert!((l.longest_baseline_m() - (33.0f64.powi(2) + 16.0).sqrt()).abs() < 1e-12);
        assert!(matches!(
            Layout::new(vec![[0.0; 3], [1.0, 0.0, 0.0]], -1.0),
            Err(ArrayError::InvalidParameter { name: "min_spacing_m", .. })
        ));
    }
}

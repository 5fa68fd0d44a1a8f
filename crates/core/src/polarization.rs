/// A receptor polarization of a circular feed.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum Pol {
    /// Right-hand circular.
    R,
    /// Left-hand circular.
    L,
}

impl Pol {
    /// Both receptors, in the order used for polarization axes of data arrays.
    pub const BOTH: [Pol; 2] = [Pol::R, Pol::L];
}

/// A parallel-hand correlation product; the data polarization axis is `[RR, LL]`.
///
/// Stokes I = (RR + LL) / 2 and V = (RR − LL) / 2 for circular feeds.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum Correlation {
    /// R × R*.
    RR,
    /// L × L*.
    LL,
}

impl Correlation {
    /// Both products, in data-axis order.
    pub const BOTH: [Correlation; 2] = [Correlation::RR, Correlation::LL];

    /// The receptor both antennas use for this parallel-hand product.
    pub fn receptor(self) -> Pol {
        match self {
            Correlation::RR => Pol::R,
            Correlation::LL => Pol::L,
        }
    }

    /// Short label used in file manifests and reports.
    pub fn label(self) -> &'static str {
        match self {
            Correlation::RR => "RR",
            Correlation::LL => "LL",
        }
    }
}

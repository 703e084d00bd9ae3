//! Value types a plan states and later stages use as given: how much of a feature to hold,
//! how a boundary's weight decays, how point values are spread onto cells. They live with the
//! plan, which owns their meaning, so no stage earlier than `features` depends on `features`.

/// How much of a feature's total the network must hold.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub enum Target {
    /// A share (0–1) of the feature's total amount.
    Share(f64),
    /// An absolute amount in the feature's unit.
    Amount(f64),
}

impl Target {
    /// The absolute amount this target asks for, given the feature's total.
    pub fn amount(self, total: f64) -> f64 {
        match self {
            Target::Share(s) => s * total,
            Target::Amount(a) => a,
        }
    }
}

/// How a boundary's weight falls off with distance d from it, inside the band.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Decay {
    /// 1 − d/band: 1 on the line, 0 at the band's edge.
    Linear,
    /// exp(−d/scale) inside the band, 0 beyond it.
    Exponential {
        /// e-folding distance. Units: km.
        scale_km: f64,
    },
}

impl Decay {
    /// Weight (0–1) at distance `d_km` for a band of `band_km` (0 beyond the band).
    pub fn weight(self, d_km: f64, band_km: f64) -> f64 {
        if d_km.is_nan() || d_km > band_km {
            return 0.0;
        }
        match self {
            Decay::Linear => {
                if band_km > 0.0 {
                    1.0 - d_km / band_km
                } else {
                    1.0
                }
            }
            Decay::Exponential { scale_km } => (-d_km / scale_km).exp(),
        }
    }
}

/// How point values are spread onto cells.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Interpolation {
    /// Inverse-distance weighting over the points within the radius: Σ vᵢ/dᵢᵖ ÷ Σ 1/dᵢᵖ
    /// (Shepard 1968, Proc. ACM National Conference, 517–524); power 2 is the usual choice.
    InverseDistance {
        /// Distance exponent p (> 0).
        power: f64,
    },
    /// The value of the nearest point within the radius (ties: the earlier point).
    Nearest,
}

//! Quality flags raised on an analysis and its structural formula.
//!
//! The thresholds are the usual acceptance limits for silicate microprobe analyses
//! (common practice): oxide total 98.5-101.5 wt%, site sums within 0.05 of their ideal values.

use serde::{Deserialize, Serialize};

use crate::analysis::{Analysis, Censored};
use crate::oxide::Oxide;

/// Acceptance limits for the quality flags (common practice defaults).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct QualityLimits {
    /// Lowest acceptable oxide total, wt%.
    pub min_total_wt: f64,
    /// Highest acceptable oxide total, wt%.
    pub max_total_wt: f64,
    /// Largest acceptable deviation of a site sum from its ideal value, atoms per formula unit.
    pub site_tolerance: f64,
}

impl Default for QualityLimits {
    fn default() -> Self {
        // Source: common practice for silicate microprobe analyses (design §3.1).
        QualityLimits {
            min_total_wt: 98.5,
            max_total_wt: 101.5,
            site_tolerance: 0.05,
        }
    }
}

/// Something about an analysis that a petrologist should look at before trusting it.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(tag = "flag", rename_all = "snake_case")]
#[non_exhaustive]
pub enum Flag {
    /// The oxide total is below the acceptance limit.
    LowTotal {
        /// Oxide total, wt%.
        total_wt: f64,
        /// The limit, wt%.
        limit_wt: f64,
    },
    /// The oxide total is above the acceptance limit.
    HighTotal {
        /// Oxide total, wt%.
        total_wt: f64,
        /// The limit, wt%.
        limit_wt: f64,
    },
    /// The total written in the file differs from the sum of the oxides by more than 0.05 wt%.
    TotalMismatch {
        /// Total as written, wt%.
        reported_wt: f64,
        /// Sum of the oxides, wt%.
        computed_wt: f64,
    },
    /// A site sum is off its ideal value by more than the tolerance.
    SiteSum {
        /// Which site (`tetrahedral`, `large_cation`, `cations`).
        site: String,
        /// Atoms per formula unit found.
        value: f64,
        /// Ideal value.
        ideal: f64,
    },
    /// An oxide was reported as a negative number.
    NegativeValue {
        /// The oxide.
        oxide: Oxide,
        /// The value, wt%.
        value_wt: f64,
    },
    /// An oxide was reported below detection and read as zero.
    BelowDetection {
        /// The oxide.
        oxide: Oxide,
        /// The text in the file.
        text: String,
    },
    /// An oxide was reported as not determined (or left empty) and read as zero.
    NotDetermined {
        /// The oxide.
        oxide: Oxide,
        /// The text in the file.
        text: String,
    },
    /// The cation sum on the oxygen basis is below the ideal: no Fe3+ can be assigned by charge
    /// balance, and the analysis may be short of cations (Droop 1987 gives a negative Fe3+).
    CationDeficit {
        /// Cation sum on the oxygen basis with all iron ferrous.
        sum: f64,
        /// Ideal cation sum.
        ideal: f64,
    },
    /// Charge balance asks for more Fe3+ than there is iron: the analysis cannot be a
    /// stoichiometric phase of this kind.
    Fe3ExceedsIron {
        /// Fe3+ that charge balance asks for, per formula unit.
        fe3_required: f64,
        /// Total iron, per formula unit.
        fe_total: f64,
    },
    /// The analysis has no usable oxide at all.
    Empty,
}

impl Flag {
    /// Whether this is only a note (a value read as zero as the file said) rather than a sign
    /// that the analysis may be poor.
    pub fn is_note(&self) -> bool {
        matches!(
            self,
            Flag::BelowDetection { .. } | Flag::NotDetermined { .. }
        )
    }

    /// A one-line explanation for tables and the message strip.
    pub fn message(&self) -> String {
        match self {
            Flag::LowTotal { total_wt, limit_wt } => {
                format!("oxide total {total_wt:.2} wt% is below {limit_wt:.1}")
            }
            Flag::HighTotal { total_wt, limit_wt } => {
                format!("oxide total {total_wt:.2} wt% is above {limit_wt:.1}")
            }
            Flag::TotalMismatch {
                reported_wt,
                computed_wt,
            } => format!(
                "total column says {reported_wt:.2} wt% but the oxides add up to {computed_wt:.2}"
            ),
            Flag::SiteSum { site, value, ideal } => {
                format!("{site} site sum {value:.3} apfu, ideal {ideal:.2}")
            }
            Flag::NegativeValue { oxide, value_wt } => {
                format!("{oxide} is negative ({value_wt} wt%), counted as zero")
            }
            Flag::BelowDetection { oxide, text } => {
                format!("{oxide} below detection ('{text}'), counted as zero")
            }
            Flag::NotDetermined { oxide, text } if text.is_empty() => {
                format!("{oxide} cell is empty, counted as zero")
            }
            Flag::NotDetermined { oxide, text } => {
                format!("{oxide} not determined ('{text}'), counted as zero")
            }
            Flag::CationDeficit { sum, ideal } => format!(
                "cation sum {sum:.3} is below {ideal:.0}: no Fe3+ by charge balance; check the analysis"
            ),
            Flag::Fe3ExceedsIron {
                fe3_required,
                fe_total,
            } => format!(
                "charge balance needs {fe3_required:.3} Fe3+ but there is only {fe_total:.3} Fe"
            ),
            Flag::Empty => "no usable oxide values".to_string(),
        }
    }
}

/// Flags that depend on the analysis alone (totals, negative and censored values).
pub(crate) fn analysis_flags(analysis: &Analysis, limits: &QualityLimits) -> Vec<Flag> {
    let mut flags = Vec::new();
    let total = analysis.total_wt();
    if total < limits.min_total_wt {
        flags.push(Flag::LowTotal {
            total_wt: total,
            limit_wt: limits.min_total_wt,
        });
    } else if total > limits.max_total_wt {
        flags.push(Flag::HighTotal {
            total_wt: total,
            limit_wt: limits.max_total_wt,
        });
    }
    if let Some(reported) = analysis.reported_total_wt
        && (reported - total).abs() > 0.05
    {
        flags.push(Flag::TotalMismatch {
            reported_wt: reported,
            computed_wt: total,
        });
    }
    for (&oxide, &value) in &analysis.oxides_wt {
        if value < 0.0 {
            flags.push(Flag::NegativeValue {
                oxide,
                value_wt: value,
            });
        }
    }
    for (&oxide, censored) in &analysis.censored {
        flags.push(match censored {
            Censored::BelowDetection { text, .. } => Flag::BelowDetection {
                oxide,
                text: text.clone(),
            },
            Censored::NotDetermined { text } => Flag::NotDetermined {
                oxide,
                text: text.clone(),
            },
        });
    }
    flags
}

/// A site-sum flag when `value` is off `ideal` by more than the tolerance.
pub(crate) fn site_flag(
    site: &str,
    value: f64,
    ideal: f64,
    limits: &QualityLimits,
) -> Option<Flag> {
    ((value - ideal).abs() > limits.site_tolerance).then(|| Flag::SiteSum {
        site: site.to_string(),
        value,
        ideal,
    })
}

//! Which grey class is which phase in a backscattered-electron image.
//!
//! The backscattered-electron coefficient rises monotonically with the mean atomic number of
//! the target, so a phase of higher mean Z is brighter. Source: Goldstein et al.,
//! *Scanning Electron Microscopy and X-ray Microanalysis* (3rd ed., 2003), §3.4.2 (BSE
//! coefficient versus atomic number; mass-fraction-weighted mean Z for compounds). The mean Z
//! of each phase is an input (the `mineral` crate computes it from the phase's composition).

use serde::{Deserialize, Serialize};

use crate::error::{MicrographError, Result};

/// Phases differing by less than this in mean Z may not be told apart reliably by BSE
/// brightness (common practice).
pub const MIN_USEFUL_DELTA_Z: f64 = 0.1;

/// A phase with its mean atomic number.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PhaseZ {
    /// Phase name as the user calls it.
    pub name: String,
    /// Mass-fraction-weighted mean atomic number.
    pub mean_z: f64,
}

/// The suggested assignment.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct OrderHint {
    /// For each grey class (index into the classes, dark to bright as given), the phase name.
    pub class_to_phase: Vec<String>,
    /// Cautions (close mean Z values).
    pub warnings: Vec<String>,
}

/// Pairs grey classes with phases: darkest class with the lowest mean Z, and so on.
/// `class_mean_gray[i]` is the mean grey of class `i`.
pub fn bse_order_hint(class_mean_gray: &[f64], phases: &[PhaseZ]) -> Result<OrderHint> {
    if class_mean_gray.len() != phases.len() {
        return Err(MicrographError::Mismatch(format!(
            "{} grey classes but {} phases",
            class_mean_gray.len(),
            phases.len()
        )));
    }
    if let Some(p) = phases
        .iter()
        .find(|p| !(p.mean_z.is_finite() && p.mean_z > 0.0))
    {
        return Err(MicrographError::InvalidParameter {
            name: "mean_z",
            value: format!("{} for {}", p.mean_z, p.name),
            expected: "a positive mean atomic number".to_string(),
        });
    }
    let mut by_gray: Vec<usize> = (0..class_mean_gray.len()).collect();
    by_gray.sort_by(|&a, &b| class_mean_gray[a].total_cmp(&class_mean_gray[b]));
    let mut by_z: Vec<&PhaseZ> = phases.iter().collect();
    by_z.sort_by(|a, b| a.mean_z.total_cmp(&b.mean_z));
    let mut class_to_phase = vec![String::new(); phases.len()];
    for (&class, phase) in by_gray.iter().zip(&by_z) {
        class_to_phase[class] = phase.name.clone();
    }
    let warnings = by_z
        .windows(2)
        .filter(|p| p[1].mean_z - p[0].mean_z < MIN_USEFUL_DELTA_Z)
        .map(|p| {
            format!(
                "{} (Z {:.3}) and {} (Z {:.3}) differ by less than {MIN_USEFUL_DELTA_Z} in mean Z: \
                 their BSE contrast may not decide which is which; confirm with analyses",
                p[0].name, p[0].mean_z, p[1].name, p[1].mean_z
            )
        })
        .collect();
    Ok(OrderHint {
        class_to_phase,
        warnings,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Mass-fraction-weighted mean Z of a formula, with standard atomic weights.
    fn mean_z(formula: &[(f64, f64, f64)]) -> f64 {
        // (count, Z, atomic weight)
        let mass: f64 = formula.iter().map(|(n, _, a)| n * a).sum();
        formula.iter().map(|(n, z, a)| n * a * z).sum::<f64>() / mass
    }

    #[test]
    fn potassic_host_is_brighter_than_sodic_lamellae() {
        // Source: standard atomic weights CIAAW 2021 (design §3.1): Na 22.98976928,
        // K 39.0983, Al 26.9815384, Si 28.085, O 15.999; Z from the periodic table. Albite
        // NaAlSi3O8 and K-feldspar KAlSi3O8; mean Z by mass fraction (Goldstein et al. 2003).
        let (na, k, al, si, o) = (
            (11.0, 22.98976928),
            (19.0, 39.0983),
            (13.0, 26.9815384),
            (14.0, 28.085),
            (8.0, 15.999),
        );
        let f = |alk: (f64, f64)| {
            mean_z(&[
                (1.0, alk.0, alk.1),
                (1.0, al.0, al.1),
                (3.0, si.0, si.1),
                (8.0, o.0, o.1),
            ])
        };
        let z_ab = f(na);
        let z_or = f(k);
        // Derived: about 10.7 and 11.9 (hand calculation); tolerance 0.1.
        assert!(
            (z_ab - 10.7).abs() < 0.1 && (z_or - 11.9).abs() < 0.1,
            "{z_ab} {z_or}"
        );
        let hint = bse_order_hint(
            &[52000.0, 31000.0],
            &[
                PhaseZ {
                    name: "albite lamellae".into(),
                    mean_z: z_ab,
                },
                PhaseZ {
                    name: "K-feldspar host".into(),
                    mean_z: z_or,
                },
            ],
        )
        .unwrap();
        assert_eq!(
            hint.class_to_phase,
            vec!["K-feldspar host", "albite lamellae"]
        );
        assert!(hint.warnings.is_empty());
        let close = bse_order_hint(
            &[1.0, 2.0],
            &[
                PhaseZ {
                    name: "a".into(),
                    mean_z: 10.70,
                },
                PhaseZ {
                    name: "b".into(),
                    mean_z: 10.75,
                },
            ],
        )
        .unwrap();
        assert_eq!(close.warnings.len(), 1);
    }
}

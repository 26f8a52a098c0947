//! `consolute solvus`, `min-temp`, `pair-temp` and `models`: the temperature side (design §4).
//!
//! Pressures are given in kbar and temperatures printed in Celsius; the engine works in bar and
//! kelvin and `solvus::units` converts in one place.

use std::path::PathBuf;

use anyhow::{Context, bail};
use clap::Args;
use serde_json::{Value, json};
use solvus::binary::{Solvus, critical_point, solvus_curve};
use solvus::model::{CoherentStrain, Composition, ModelKind, SolutionModel};
use solvus::stability::{MinTemperature, min_crystallisation_temperature};
use solvus::ternary::{TernaryIsotherm, ternary_isotherm};
use solvus::thermometry::{
    AdjustmentOutcome, ComponentTemperature, DEFAULT_UNCERTAINTY, adjust_pair, pair_temperatures,
};
use solvus::units::{bar_from_kbar, celsius_from_kelvin, kelvin_from_celsius};

/// Which solution model to use.
#[derive(Debug, Args)]
pub struct ModelChoice {
    /// Built-in model id: tw1969, haselton1983, th1979 (Ab-Or); fl1988, eg1990 (Ab-Or-An).
    #[arg(
        long,
        required_unless_present = "model_file",
        conflicts_with = "model_file"
    )]
    pub model: Option<String>,
    /// A user-defined model in JSON instead of a built-in one.
    #[arg(long, value_name = "JSON")]
    pub model_file: Option<PathBuf>,
    /// Add the elastic strain term of a coherent solvus (Cahn 1962 form; parameters from
    /// memory, see `consolute models`).
    #[arg(long)]
    pub coherent: bool,
    /// Coherent strain: lattice misfit eta = (1/a) da/dX (default 0.054).
    #[arg(long, requires = "coherent")]
    pub coherent_eta: Option<f64>,
    /// Coherent strain: effective elastic modulus, GPa (default 9.5).
    #[arg(long, requires = "coherent")]
    pub coherent_modulus_gpa: Option<f64>,
}

impl ModelChoice {
    fn load(&self) -> anyhow::Result<SolutionModel> {
        let model = match (&self.model, &self.model_file) {
            (_, Some(path)) => SolutionModel::from_json_file(path)?,
            (Some(id), None) => SolutionModel::builtin(id)?,
            (None, None) => bail!("give --model ID or --model-file JSON"),
        };
        if !self.coherent {
            return Ok(model);
        }
        let mut strain = CoherentStrain::default();
        if let Some(eta) = self.coherent_eta {
            strain.eta = eta;
        }
        if let Some(y) = self.coherent_modulus_gpa {
            strain.modulus_gpa = y;
        }
        if !(strain.eta.is_finite() && strain.eta > 0.0) {
            bail!(
                "--coherent-eta must be a positive number, got {}",
                strain.eta
            );
        }
        if !(strain.modulus_gpa.is_finite() && strain.modulus_gpa > 0.0) {
            bail!(
                "--coherent-modulus-gpa must be a positive number, got {}",
                strain.modulus_gpa
            );
        }
        Ok(model.with_coherent_strain(strain))
    }
}

fn pressure_bar(model: &SolutionModel, pressure_kbar: f64) -> anyhow::Result<f64> {
    let [lo, hi] = model.range.pressure_kbar;
    if !pressure_kbar.is_finite() || pressure_kbar < lo || pressure_kbar > hi {
        bail!(
            "--pressure-kbar {pressure_kbar}: model `{}` is used between {lo} and {hi} kbar",
            model.id
        );
    }
    Ok(bar_from_kbar(pressure_kbar))
}

fn composition_json(c: &Composition) -> Value {
    json!({"x_ab": c.x_ab, "x_or": c.x_or, "x_an": c.x_an})
}

fn coherent_json(model: &SolutionModel) -> Value {
    match model.coherent {
        Some(c) => json!({
            "eta": c.eta,
            "modulus_gpa": c.modulus_gpa,
            "molar_volume_j_per_bar": c.molar_volume_j_per_bar,
            "strain_energy_j_per_mol": c.energy_j(),
            "status": "from memory (Cahn 1962 form)",
        }),
        None => Value::Null,
    }
}

/// Arguments of `consolute solvus`.
#[derive(Debug, Args)]
pub struct SolvusArgs {
    #[command(flatten)]
    pub model: ModelChoice,
    /// Pressure, kbar.
    #[arg(long)]
    pub pressure_kbar: f64,
    /// Also compute the ternary binodal (tie-lines) at this temperature, C (ternary models).
    #[arg(long)]
    pub isotherm_c: Option<f64>,
    /// Number of temperatures below the critical point.
    #[arg(long, default_value_t = 200)]
    pub points: usize,
    /// Lowest temperature traced, C (default: bottom of the model's range).
    #[arg(long)]
    pub t_min_c: Option<f64>,
    /// Print one JSON object on stdout instead of a table.
    #[arg(long)]
    pub json: bool,
}

/// Run `consolute solvus`.
pub fn run_solvus(args: &SolvusArgs) -> anyhow::Result<()> {
    let model = args.model.load()?;
    let p_bar = pressure_bar(&model, args.pressure_kbar)?;
    if args.points == 0 || args.points > 100_000 {
        bail!("--points must be between 1 and 100000, got {}", args.points);
    }
    let t_min_c = args.t_min_c.unwrap_or(model.range.temperature_c[0]);
    let curve: Solvus = solvus_curve(&model, p_bar, args.points, kelvin_from_celsius(t_min_c))
        .with_context(|| format!("tracing the Ab-Or solvus of `{}`", model.id))?;
    let isotherm = match args.isotherm_c {
        Some(t_c) => Some(
            ternary_isotherm(&model, kelvin_from_celsius(t_c), p_bar)
                .with_context(|| format!("ternary isotherm at {t_c} C"))?,
        ),
        None => None,
    };
    if args.json {
        let binodal: Vec<Value> = curve
            .points
            .iter()
            .map(|p| {
                json!({
                    "temperature_c": celsius_from_kelvin(p.temperature_k),
                    "x_or_na_limb": p.x_or_na_limb,
                    "x_or_k_limb": p.x_or_k_limb,
                })
            })
            .collect();
        let spinodal: Vec<Value> = curve
            .points
            .iter()
            .map(|p| {
                json!({
                    "temperature_c": celsius_from_kelvin(p.temperature_k),
                    "x_or_na_side": p.spinodal_na,
                    "x_or_k_side": p.spinodal_k,
                })
            })
            .collect();
        let mut out = json!({
            "model": model.id,
            "citation": model.citation,
            "pressure_kbar": args.pressure_kbar,
            "consolute_point": {
                "temperature_c": celsius_from_kelvin(curve.critical.temperature_k),
                "x_or": curve.critical.x_or,
            },
            "binodal": binodal,
            "spinodal": spinodal,
            "coherent": coherent_json(&model),
        });
        if let Some(iso) = &isotherm {
            out["isotherm"] = isotherm_json(iso);
        }
        println!("{out}");
        return Ok(());
    }
    println!(
        "model {} at {} kbar{}",
        model.id,
        args.pressure_kbar,
        if model.coherent.is_some() {
            " (coherent strain term on, from memory)"
        } else {
            ""
        }
    );
    println!(
        "consolute point: {:.2} C at X_Or {:.4}",
        celsius_from_kelvin(curve.critical.temperature_k),
        curve.critical.x_or
    );
    println!(
        "{:>10}  {:>10}  {:>10}  {:>10}  {:>10}",
        "T (C)", "Na limb", "K limb", "spin. Na", "spin. K"
    );
    let step = (curve.points.len() / 40).max(1);
    for (i, p) in curve.points.iter().enumerate() {
        if i % step == 0 || i + 1 == curve.points.len() {
            println!(
                "{:>10.2}  {:>10.4}  {:>10.4}  {:>10.4}  {:>10.4}",
                celsius_from_kelvin(p.temperature_k),
                p.x_or_na_limb,
                p.x_or_k_limb,
                p.spinodal_na,
                p.spinodal_k
            );
        }
    }
    if step > 1 {
        println!(
            "(every {step}th of {} points shown; --json gives all)",
            curve.points.len()
        );
    }
    if let Some(iso) = &isotherm {
        println!();
        println!(
            "ternary binodal at {:.1} C: {} tie-lines",
            celsius_from_kelvin(iso.temperature_k),
            iso.tie_lines.len()
        );
        println!(
            "{:>8} {:>8} {:>8}   {:>8} {:>8} {:>8}",
            "Ab", "Or", "An", "Ab", "Or", "An"
        );
        let step = (iso.tie_lines.len() / 25).max(1);
        for (i, t) in iso.tie_lines.iter().enumerate() {
            if i % step == 0 || i + 1 == iso.tie_lines.len() {
                let (a, b) = (t.na_rich, t.k_rich);
                println!(
                    "{:>8.4} {:>8.4} {:>8.4}   {:>8.4} {:>8.4} {:>8.4}",
                    a.x_ab, a.x_or, a.x_an, b.x_ab, b.x_or, b.x_an
                );
            }
        }
        match &iso.critical_point {
            Some(c) => println!(
                "critical point of the isotherm: Ab {:.4} Or {:.4} An {:.4}",
                c.x_ab, c.x_or, c.x_an
            ),
            None if iso.unresolved_band => {
                println!(
                    "a band was followed as far as the solver could go; its end was not located"
                )
            }
            None => println!("the two limbs do not meet at this temperature (no critical point)"),
        }
        if let Some(tri) = &iso.three_phase {
            println!("three-phase triangle:");
            for c in tri {
                println!("  Ab {:.4} Or {:.4} An {:.4}", c.x_ab, c.x_or, c.x_an);
            }
        }
    }
    Ok(())
}

fn isotherm_json(iso: &TernaryIsotherm) -> Value {
    json!({
        "temperature_c": celsius_from_kelvin(iso.temperature_k),
        "tie_lines": iso.tie_lines.iter().map(|t| json!({
            "na_rich": composition_json(&t.na_rich),
            "k_rich": composition_json(&t.k_rich),
        })).collect::<Vec<_>>(),
        "critical_point": iso.critical_point.as_ref().map(composition_json),
        "three_phase": iso.three_phase.as_ref().map(|t| t.iter().map(composition_json).collect::<Vec<_>>()),
        "unresolved_band": iso.unresolved_band,
    })
}

/// Arguments of `consolute min-temp`.
#[derive(Debug, Args)]
pub struct MinTempArgs {
    #[command(flatten)]
    pub model: ModelChoice,
    /// Pressure, kbar.
    #[arg(long)]
    pub pressure_kbar: f64,
    /// Mole fraction of albite in the bulk.
    #[arg(long = "ab")]
    pub x_ab: f64,
    /// Mole fraction of orthoclase in the bulk.
    #[arg(long = "or")]
    pub x_or: f64,
    /// Mole fraction of anorthite in the bulk.
    #[arg(long = "an", default_value_t = 0.0)]
    pub x_an: f64,
    /// Print one JSON object on stdout instead of a table.
    #[arg(long)]
    pub json: bool,
}

/// Run `consolute min-temp`.
pub fn run_min_temp(args: &MinTempArgs) -> anyhow::Result<()> {
    let model = args.model.load()?;
    let p_bar = pressure_bar(&model, args.pressure_kbar)?;
    let bulk = Composition::new(args.x_ab, args.x_or, args.x_an).context("--ab/--or/--an")?;
    let r = min_crystallisation_temperature(&model, &bulk, p_bar)?;
    let c_range = model.range.temperature_c;
    let (t_c, outcome, message, conjugate) = match &r.outcome {
        MinTemperature::Found {
            temperature_k,
            conjugate,
        } => (
            Some(celsius_from_kelvin(*temperature_k)),
            "found",
            format!(
                "one phase above {:.2} C; below it the bulk unmixes",
                celsius_from_kelvin(*temperature_k)
            ),
            Some(*conjugate),
        ),
        MinTemperature::StableInRange { .. } => (
            None,
            "stable_in_range",
            format!(
                "the bulk is stable as one phase at every temperature from {} to {} C",
                c_range[0], c_range[1]
            ),
            None,
        ),
        MinTemperature::UnstableAtRangeTop { .. } => (
            None,
            "unstable_at_range_top",
            format!(
                "the bulk is not stable as one phase even at {} C, the top of the model's range",
                c_range[1]
            ),
            None,
        ),
        MinTemperature::OutsideCompositionRange { reason } => {
            (None, "outside_composition_range", reason.clone(), None)
        }
        _ => (
            None,
            "unknown",
            "an outcome this version does not describe".into(),
            None,
        ),
    };
    if args.json {
        let out = json!({
            "min_temperature_c": t_c,
            "model": model.id,
            "pressure_kbar": args.pressure_kbar,
            "projected": r.projected,
            "composition": composition_json(&r.composition),
            "outcome": outcome,
            "message": message,
            "conjugate": conjugate.as_ref().map(composition_json),
            "coherent": coherent_json(&model),
        });
        println!("{out}");
        return Ok(());
    }
    println!("model {} at {} kbar", model.id, args.pressure_kbar);
    let c = r.composition;
    println!(
        "bulk used: Ab {:.4} Or {:.4} An {:.4}{}",
        c.x_ab,
        c.x_or,
        c.x_an,
        if r.projected {
            " (projected onto Ab-Or: X_Or/(X_Ab+X_Or))"
        } else {
            ""
        }
    );
    match t_c {
        Some(t) => println!("minimum crystallisation temperature: {t:.2} C"),
        None => println!("minimum crystallisation temperature: none"),
    }
    println!("{message}");
    if let Some(k) = conjugate {
        println!(
            "first phase to exsolve: Ab {:.4} Or {:.4} An {:.4}",
            k.x_ab, k.x_or, k.x_an
        );
    }
    Ok(())
}

/// Arguments of `consolute pair-temp`.
#[derive(Debug, Args)]
pub struct PairTempArgs {
    #[command(flatten)]
    pub model: ModelChoice,
    /// Pressure, kbar.
    #[arg(long)]
    pub pressure_kbar: f64,
    /// First phase as AB,OR,AN mole fractions.
    #[arg(long, value_name = "AB,OR,AN")]
    pub phase1: String,
    /// Second phase as AB,OR,AN mole fractions.
    #[arg(long, value_name = "AB,OR,AN")]
    pub phase2: String,
    /// Move both compositions within the analytical uncertainty to bring the temperatures
    /// together (Fuhrman & Lindsley 1988 approach).
    #[arg(long)]
    pub adjust: bool,
    /// Analytical uncertainty on each mole fraction used by --adjust.
    #[arg(long, default_value_t = DEFAULT_UNCERTAINTY)]
    pub uncertainty: f64,
    /// Print one JSON object on stdout instead of a table.
    #[arg(long)]
    pub json: bool,
}

fn parse_phase(flag: &str, text: &str) -> anyhow::Result<Composition> {
    let parts: Vec<&str> = text.split(',').map(str::trim).collect();
    if parts.len() != 3 {
        bail!("{flag} `{text}`: expected three numbers AB,OR,AN separated by commas");
    }
    let mut v = [0.0; 3];
    for (i, (p, name)) in parts.iter().zip(["AB", "OR", "AN"]).enumerate() {
        v[i] = p.parse::<f64>().with_context(|| {
            format!(
                "{flag} `{text}`: {name} (item {}) `{p}` is not a number",
                i + 1
            )
        })?;
    }
    Composition::new(v[0], v[1], v[2]).with_context(|| format!("{flag} `{text}`"))
}

fn temps_json(t: &[&ComponentTemperature; 3]) -> (Value, Value) {
    let mut temps = serde_json::Map::new();
    let mut notes = serde_json::Map::new();
    for (name, c) in ["ab", "or", "an"].iter().zip(t.iter()) {
        match c {
            ComponentTemperature::Root { temperature_k } => {
                temps.insert((*name).into(), json!(celsius_from_kelvin(*temperature_k)));
            }
            ComponentTemperature::NoRootInRange { reason } => {
                temps.insert((*name).into(), Value::Null);
                notes.insert((*name).into(), json!(reason));
            }
            _ => {
                temps.insert((*name).into(), Value::Null);
            }
        }
    }
    (Value::Object(temps), Value::Object(notes))
}

/// Run `consolute pair-temp`.
pub fn run_pair_temp(args: &PairTempArgs) -> anyhow::Result<()> {
    let model = args.model.load()?;
    let p_bar = pressure_bar(&model, args.pressure_kbar)?;
    let a = parse_phase("--phase1", &args.phase1)?;
    let b = parse_phase("--phase2", &args.phase2)?;
    let r = pair_temperatures(&model, &a, &b, p_bar)?;
    let adjustment = if args.adjust {
        Some(adjust_pair(&model, &a, &b, p_bar, args.uncertainty)?)
    } else {
        None
    };
    let (temps, notes) = temps_json(&r.components());
    if args.json {
        let mut out = json!({
            "model": model.id,
            "pressure_kbar": args.pressure_kbar,
            "projected": r.projected,
            "temperatures_c": temps,
            "spread_c": r.spread_k,
            "notes": notes,
        });
        if let Some(adj) = &adjustment {
            out["adjustment"] = match adj {
                AdjustmentOutcome::Adjusted(a) => {
                    let (t2, n2) = temps_json(&a.temperatures.components());
                    json!({
                        "phase1": composition_json(&a.phase1),
                        "phase2": composition_json(&a.phase2),
                        "temperature_c": celsius_from_kelvin(a.temperature_k),
                        "temperatures_c": t2,
                        "spread_c": a.spread_k,
                        "uncertainty": a.uncertainty,
                        "max_change": a.max_change,
                        "concordant_within_uncertainty": a.concordant_within_uncertainty,
                        "notes": n2,
                    })
                }
                AdjustmentOutcome::TooFewTemperatures { available } => json!({
                    "outcome": "too_few_temperatures",
                    "available": available,
                }),
                _ => Value::Null,
            };
        }
        println!("{out}");
        return Ok(());
    }
    println!(
        "model {} at {} kbar{}",
        model.id,
        args.pressure_kbar,
        if r.projected {
            " (compositions projected onto Ab-Or)"
        } else {
            ""
        }
    );
    for (name, c) in ["T_Ab", "T_Or", "T_An"].iter().zip(r.components()) {
        match c {
            ComponentTemperature::Root { temperature_k } => {
                println!("{name}: {:.1} C", celsius_from_kelvin(*temperature_k));
            }
            ComponentTemperature::NoRootInRange { reason } => {
                println!("{name}: no root ({reason})")
            }
            _ => println!("{name}: none"),
        }
    }
    match r.spread_k {
        Some(s) => println!("spread: {s:.1} C"),
        None => println!("spread: fewer than two temperatures"),
    }
    if let Some(adj) = adjustment {
        match adj {
            AdjustmentOutcome::Adjusted(a) => {
                println!(
                    "adjusted within {:.3} (largest change {:.4}): {:.1} C, spread {:.2} C{}",
                    a.uncertainty,
                    a.max_change,
                    celsius_from_kelvin(a.temperature_k),
                    a.spread_k,
                    if a.concordant_within_uncertainty {
                        ""
                    } else {
                        " (not concordant within the uncertainty)"
                    }
                );
                let (p, q) = (a.phase1, a.phase2);
                println!(
                    "  phase 1: Ab {:.4} Or {:.4} An {:.4}",
                    p.x_ab, p.x_or, p.x_an
                );
                println!(
                    "  phase 2: Ab {:.4} Or {:.4} An {:.4}",
                    q.x_ab, q.x_or, q.x_an
                );
            }
            AdjustmentOutcome::TooFewTemperatures { available } => {
                println!("no adjustment: only {available} component temperature(s) exist");
            }
            _ => {}
        }
    }
    Ok(())
}

/// Arguments of `consolute models`.
#[derive(Debug, Args)]
pub struct ModelsArgs {
    /// Print one JSON object on stdout instead of a table.
    #[arg(long)]
    pub json: bool,
}

/// Run `consolute models`.
pub fn run_models(args: &ModelsArgs) -> anyhow::Result<()> {
    let models = SolutionModel::builtins();
    let strain = CoherentStrain::default();
    if args.json {
        let list: Vec<Value> = models
            .iter()
            .map(|m| {
                let crit = critical_point(m, bar_from_kbar(1.0)).ok();
                json!({
                    "id": m.id,
                    "citation": m.citation,
                    "kind": match m.kind { ModelKind::Binary => "binary", ModelKind::Ternary => "ternary" },
                    "ideal_mixing": m.ideal_mixing.label(),
                    "margules": m.margules,
                    "range": m.range,
                    "consolute_point_1kbar": crit.map(|c| json!({
                        "temperature_c": celsius_from_kelvin(c.temperature_k),
                        "x_or": c.x_or,
                    })),
                })
            })
            .collect();
        let out = json!({
            "models": list,
            "coherent_strain_default": {
                "eta": strain.eta,
                "modulus_gpa": strain.modulus_gpa,
                "molar_volume_j_per_bar": strain.molar_volume_j_per_bar,
                "strain_energy_j_per_mol": strain.energy_j(),
                "status": "from memory (Cahn 1962 form); off unless --coherent is given",
            },
        });
        println!("{out}");
        return Ok(());
    }
    println!("{:<14} {:<8} {:<13} citation", "id", "kind", "ideal mixing");
    for m in &models {
        let kind = match m.kind {
            ModelKind::Binary => "binary",
            ModelKind::Ternary => "ternary",
        };
        println!(
            "{:<14} {:<8} {:<13} {}",
            m.id,
            kind,
            m.ideal_mixing.label(),
            m.citation
        );
    }
    println!();
    println!(
        "coherent strain term (--coherent; from memory): eta {} , modulus {} GPa, molar volume {} J/bar -> {:.0} J/mol",
        strain.eta,
        strain.modulus_gpa,
        strain.molar_volume_j_per_bar,
        strain.energy_j()
    );
    println!(
        "user models: --model-file FILE.json (see the solvus crate documentation for the format)"
    );
    Ok(())
}

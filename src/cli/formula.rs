//! `consolute formula CSV --mineral feldspar|pyroxene [--json]`.

use std::path::PathBuf;

use anyhow::Context;
use clap::{Args, ValueEnum};
use mineral::{
    Cation, Cations, FeldsparIron, Flag, PyroxeneIron, QualityLimits, SpotTable, feldspar_formula,
    pyroxene_formula, read_spot_file,
};
use serde_json::{Value, json};

/// Mineral group of the analyses.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum MineralKind {
    /// 8 oxygens; Ab, Or, An, Cn, Sr fractions.
    Feldspar,
    /// 6 oxygens and 4 cations; Wo, En, Fs, Jd, Ae.
    Pyroxene,
}

/// Iron reading for feldspar.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum FeldsparIronArg {
    /// FeO recast as Fe2O3 on the tetrahedral site (default).
    Ferric,
    /// FeO as Fe2+ with the large cations.
    Ferrous,
}

/// Iron reading for pyroxene.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum PyroxeneIronArg {
    /// Fe3+ by charge balance, Droop (1987) (default).
    ChargeBalance,
    /// FeO and Fe2O3 as reported.
    AsReported,
}

/// Arguments of `consolute formula`.
#[derive(Debug, Args)]
pub struct FormulaArgs {
    /// CSV (or semicolon/tab separated) file of spot analyses in oxide wt%.
    pub csv: PathBuf,
    /// Mineral group of the analyses.
    #[arg(long, value_enum)]
    pub mineral: MineralKind,
    /// How FeO in a feldspar is read.
    #[arg(long, value_enum, default_value = "ferric")]
    pub feldspar_iron: FeldsparIronArg,
    /// How Fe3+ in a pyroxene is obtained.
    #[arg(long, value_enum, default_value = "charge-balance")]
    pub pyroxene_iron: PyroxeneIronArg,
    /// Print one JSON object on stdout instead of a table.
    #[arg(long)]
    pub json: bool,
}

/// One analysis computed, ready for printing.
struct Row {
    label: String,
    line: usize,
    json: Value,
    cations: Cations,
    columns: Vec<f64>,
    total_wt: f64,
    flags: Vec<Flag>,
}

/// Run `consolute formula`.
pub fn run(args: &FormulaArgs) -> anyhow::Result<()> {
    let table = read_spot_file(&args.csv)?;
    let limits = QualityLimits::default();
    let (headers, rows, iron_note) = match args.mineral {
        MineralKind::Feldspar => {
            let iron = match args.feldspar_iron {
                FeldsparIronArg::Ferric => FeldsparIron::Ferric,
                FeldsparIronArg::Ferrous => FeldsparIron::Ferrous,
            };
            (
                vec!["X_Ab", "X_Or", "X_An", "X_Cn", "T site", "A site"],
                feldspar_rows(&table, iron, &limits),
                iron.describe(),
            )
        }
        MineralKind::Pyroxene => {
            let iron = match args.pyroxene_iron {
                PyroxeneIronArg::ChargeBalance => PyroxeneIron::ChargeBalance,
                PyroxeneIronArg::AsReported => PyroxeneIron::AsReported,
            };
            (
                vec!["Wo", "En", "Fs", "Jd", "Ae", "Mg#"],
                pyroxene_rows(&table, iron, &limits),
                iron.describe(),
            )
        }
    };
    if args.json {
        let out = json!({
            "file": args.csv.display().to_string(),
            "mineral": format!("{:?}", args.mineral).to_lowercase(),
            "iron": iron_note,
            "ignored_columns": table.ignored_columns.iter().map(|(c, n)| json!({"column": c, "name": n})).collect::<Vec<_>>(),
            "analyses": rows.iter().map(|r| r.json.clone()).collect::<Vec<_>>(),
        });
        println!(
            "{}",
            serde_json::to_string_pretty(&out).context("writing JSON")?
        );
    } else {
        print_table(&table, &headers, &rows, iron_note);
    }
    Ok(())
}

fn cations_json(cations: &Cations) -> Value {
    Value::Object(
        cations
            .iter()
            .map(|(c, n)| (c.label().to_string(), json!(n)))
            .collect(),
    )
}

fn flags_json(flags: &[Flag]) -> Value {
    Value::Array(
        flags
            .iter()
            .map(|f| {
                let mut v = serde_json::to_value(f).unwrap_or(Value::Null);
                if let Value::Object(map) = &mut v {
                    map.insert("message".into(), json!(f.message()));
                    let severity = if f.is_note() { "note" } else { "warning" };
                    map.insert("severity".into(), json!(severity));
                }
                v
            })
            .collect(),
    )
}

/// The parts of a computed formula that a row shows, whatever the mineral.
struct Computed {
    cations: Cations,
    end_members: Value,
    /// Mineral-specific JSON fields beyond the common ones.
    extra: Vec<(&'static str, Value)>,
    /// Values for the table's mineral-specific columns.
    columns: Vec<f64>,
    total_wt: f64,
    flags: Vec<Flag>,
}

/// One table row and JSON object per analysis, from a per-analysis formula calculation.
fn rows(table: &SpotTable, compute: impl Fn(&mineral::Analysis) -> Computed) -> Vec<Row> {
    table
        .analyses
        .iter()
        .zip(&table.lines)
        .map(|(a, &line)| {
            let c = compute(a);
            let label = a.id.label();
            let mut map = serde_json::Map::new();
            map.insert("id".into(), json!(label));
            map.insert("sample".into(), json!(a.id.sample));
            map.insert("grain".into(), json!(a.id.grain));
            map.insert("phase".into(), json!(a.id.phase));
            map.insert("spot".into(), json!(a.id.spot));
            map.insert("line".into(), json!(line));
            map.insert("cations".into(), cations_json(&c.cations));
            map.insert("end_members".into(), c.end_members);
            for (key, value) in c.extra {
                map.insert(key.into(), value);
            }
            map.insert("total_wt".into(), json!(c.total_wt));
            map.insert("flags".into(), flags_json(&c.flags));
            Row {
                label,
                line,
                json: Value::Object(map),
                cations: c.cations,
                columns: c.columns,
                total_wt: c.total_wt,
                flags: c.flags,
            }
        })
        .collect()
}

fn feldspar_rows(table: &SpotTable, iron: FeldsparIron, limits: &QualityLimits) -> Vec<Row> {
    rows(table, |a| {
        let f = feldspar_formula(a, iron, limits);
        let e = f.end_members;
        Computed {
            end_members: json!({"x_ab": e.x_ab, "x_or": e.x_or, "x_an": e.x_an, "x_cn": e.x_cn, "x_sr": e.x_sr}),
            extra: vec![
                ("tetrahedral_sum", json!(f.tetrahedral_sum)),
                ("large_cation_sum", json!(f.large_cation_sum)),
            ],
            columns: vec![
                e.x_ab,
                e.x_or,
                e.x_an,
                e.x_cn,
                f.tetrahedral_sum,
                f.large_cation_sum,
            ],
            cations: f.cations,
            total_wt: f.total_wt,
            flags: f.flags,
        }
    })
}

fn pyroxene_rows(table: &SpotTable, iron: PyroxeneIron, limits: &QualityLimits) -> Vec<Row> {
    rows(table, |a| {
        let f = pyroxene_formula(a, iron, limits);
        let e = f.end_members;
        Computed {
            end_members: json!({"wo": e.wo, "en": e.en, "fs": e.fs, "jd": e.jd, "ae": e.ae}),
            extra: vec![
                ("mg_number", json!(f.mg_number)),
                ("x_fe", json!(f.x_fe)),
                ("fe3_over_fe_total", json!(f.fe3_over_fe_total)),
                (
                    "sites",
                    json!({"t": cations_json(&f.sites.t), "m1": cations_json(&f.sites.m1), "m2": cations_json(&f.sites.m2)}),
                ),
            ],
            columns: vec![e.wo, e.en, e.fs, e.jd, e.ae, f.mg_number],
            cations: f.cations,
            total_wt: f.total_wt,
            flags: f.flags,
        }
    })
}

fn print_table(table: &SpotTable, headers: &[&str], rows: &[Row], iron_note: &str) {
    let shown = [
        Cation::Si,
        Cation::Al,
        Cation::Ti,
        Cation::Fe3,
        Cation::Fe2,
        Cation::Mg,
        Cation::Mn,
        Cation::Ca,
        Cation::Na,
        Cation::K,
        Cation::Ba,
        Cation::Sr,
    ];
    let present: Vec<Cation> = shown
        .into_iter()
        .filter(|c| {
            rows.iter()
                .any(|r| r.cations.get(c).is_some_and(|v| *v > 0.0))
        })
        .collect();
    let width = rows.iter().map(|r| r.label.len()).max().unwrap_or(4).max(4);
    let mut header = format!("{:<width$}  {:>6}", "spot", "total");
    for c in &present {
        header.push_str(&format!(" {:>6}", c.label()));
    }
    for h in headers {
        header.push_str(&format!(" {h:>6}"));
    }
    header.push_str("  warnings");
    println!("{header}");
    for row in rows {
        let mut line = format!("{:<width$}  {:>6.2}", row.label, row.total_wt);
        for c in &present {
            line.push_str(&format!(
                " {:>6.3}",
                row.cations.get(c).copied().unwrap_or(0.0)
            ));
        }
        for v in &row.columns {
            line.push_str(&format!(" {v:>6.3}"));
        }
        let warnings = row.flags.iter().filter(|f| !f.is_note()).count();
        line.push_str(&format!("  {warnings}"));
        println!("{line}");
    }
    println!();
    println!("Iron: {iron_note}.");
    if !table.ignored_columns.is_empty() {
        let names: Vec<String> = table
            .ignored_columns
            .iter()
            .map(|(c, n)| format!("'{n}' (column {c})"))
            .collect();
        println!("Columns not used: {}.", names.join(", "));
    }
    let mut notes: std::collections::BTreeMap<String, usize> = std::collections::BTreeMap::new();
    for flag in rows.iter().flat_map(|r| &r.flags).filter(|f| f.is_note()) {
        *notes.entry(flag.message()).or_default() += 1;
    }
    for (message, count) in &notes {
        println!("Note: {message} in {count} of {} analyses.", rows.len());
    }
    let flagged: Vec<&Row> = rows
        .iter()
        .filter(|r| r.flags.iter().any(|f| !f.is_note()))
        .collect();
    if flagged.is_empty() {
        println!("No analysis flagged.");
    } else {
        println!("Flagged analyses (acceptance limits: common practice):");
        for row in flagged {
            for flag in row.flags.iter().filter(|f| !f.is_note()) {
                println!("  {} (line {}): {}", row.label, row.line, flag.message());
            }
        }
    }
}

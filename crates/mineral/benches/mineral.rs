//! Throughput of the formula calculations and of the spot-analysis import.
#![allow(clippy::unwrap_used)]

use criterion::{Criterion, black_box, criterion_group, criterion_main};
use mineral::{
    EndMember, FeldsparIron, PyroxeneIron, QualityLimits, feldspar_formula, ideal_oxide_wt,
    parse_spot_table, pyroxene_formula,
};

fn analysis(mixture: &[(EndMember, f64)]) -> mineral::Analysis {
    mineral::Analysis {
        oxides_wt: ideal_oxide_wt(mixture).unwrap(),
        ..Default::default()
    }
}

fn formulae(c: &mut Criterion) {
    let limits = QualityLimits::default();
    let fsp = analysis(&[
        (EndMember::Albite, 0.3),
        (EndMember::KFeldspar, 0.68),
        (EndMember::Anorthite, 0.02),
    ]);
    let px = analysis(&[
        (EndMember::Diopside, 0.6),
        (EndMember::Hedenbergite, 0.2),
        (EndMember::Aegirine, 0.05),
        (EndMember::Enstatite, 0.15),
    ]);
    c.bench_function("feldspar_formula", |b| {
        b.iter(|| feldspar_formula(black_box(&fsp), FeldsparIron::Ferric, &limits))
    });
    c.bench_function("pyroxene_formula", |b| {
        b.iter(|| pyroxene_formula(black_box(&px), PyroxeneIron::ChargeBalance, &limits))
    });
}

fn import(c: &mut Criterion) {
    let mut text = String::from("sample,grain,phase,spot,SiO2,Al2O3,FeO,CaO,BaO,Na2O,K2O,Total\n");
    for i in 0..1000 {
        text.push_str(&format!(
            "S1,g{},host,{i},64.{},18.4,0.1,0.2,n.d.,1.1,15.2,99.3\n",
            i / 10,
            i % 10
        ));
    }
    c.bench_function("parse_1000_spots", |b| {
        b.iter(|| parse_spot_table(black_box(text.as_bytes()), "bench.csv").unwrap())
    });
}

criterion_group!(benches, formulae, import);
criterion_main!(benches);

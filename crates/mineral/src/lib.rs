//! Mineral chemistry for Consolute: microprobe spot analyses to structural formulae, end-member
//! fractions, molar masses, molar volumes and densities.
//!
//! - [`Element`] and [`Oxide`]: standard atomic weights (CIAAW 2021) and oxide masses computed
//!   from them.
//! - [`feldspar_formula`]: 8 oxygens, X_Ab / X_Or / X_An / X_Cn / X_Sr, site sums, flags.
//! - [`pyroxene_formula`]: 6 oxygens and 4 cations, Fe3+ by charge balance (Droop 1987),
//!   Wo / En / Fs, jadeite and aegirine, Mg#.
//! - [`ideal_oxide_wt`] and [`mixture_properties`]: the reverse calculation, and molar volume
//!   (Holland & Powell 2011 or Berman 1988) and density of any end-member mixture.
//! - [`parse_spot_table`] / [`read_spot_file`]: tolerant CSV import with exact error locations.
//!
//! ```
//! use mineral::{parse_spot_table, feldspar_formula, FeldsparIron, QualityLimits};
//! let csv = "spot,SiO2,Al2O3,Na2O,K2O,CaO\nh1,64.8,18.4,0.8,15.6,0.2\n";
//! let table = parse_spot_table(csv.as_bytes(), "example.csv").unwrap();
//! let f = feldspar_formula(&table.analyses[0], FeldsparIron::Ferric, &QualityLimits::default());
//! assert!(f.end_members.x_or > 0.9);
//! ```

mod analysis;
mod element;
mod end_member;
mod feldspar;
mod import;
mod oxide;
mod pyroxene;
mod quality;

pub use analysis::{Analysis, Cation, Cations, Censored, SpotId};
pub use element::Element;
pub use end_member::{
    EndMember, EndMemberError, FeldsparState, MixtureProperties, VolumeDataset,
    end_member_volume_j_per_bar, ideal_oxide_wt, mixture_properties,
};
pub use feldspar::{FeldsparEndMembers, FeldsparFormula, FeldsparIron, feldspar_formula};
pub use import::{ImportError, ImportErrorKind, SpotTable, parse_spot_table, read_spot_file};
pub use oxide::Oxide;
pub use pyroxene::{
    PyroxeneEndMembers, PyroxeneFormula, PyroxeneIron, PyroxeneSites, pyroxene_cations_total_iron,
    pyroxene_formula,
};
pub use quality::{Flag, QualityLimits};

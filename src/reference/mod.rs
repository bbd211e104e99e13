//! Reference data and notation shared by every stage: species notation, formulas and atomic
//! weights, reagent and hazard data, glassware kinds and tolerances. Nothing here depends on a
//! stage of the data flow.

pub mod equation;
pub mod formula;
pub mod glassware;
pub mod reagents;
pub mod species;
pub mod tolerance;

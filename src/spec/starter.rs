//! `clockprep init`: a commented starter spec for one reaction preset that solves as written.
//! Every stock is delivered by a 50 mL buret graduated in 0.1 mL, and each stock's volume in a
//! run is a multiple of a fifth or a tenth of the run volume (×1.5 levels only of fifths), so
//! any whole-millilitre run volume from 10 to 100 mL gives deliverable volumes; the runs are a base point and, in turn, each rate-law
//! species doubled, then each at one and a half times its base.

use super::presets;

/// What the starter is made for.
#[derive(Debug, Clone, PartialEq)]
pub struct StarterOptions {
    pub preset: String,
    /// mL, whole, 10 to 100.
    pub volume_ml: u32,
    pub runs: u32,
    pub stations: u32,
    pub title: String,
}

impl Default for StarterOptions {
    fn default() -> Self {
        StarterOptions {
            preset: "bromate-iodide".into(),
            volume_ml: 50,
            runs: 4,
            stations: 4,
            title: "New clock-reaction lab (edit this title)".into(),
        }
    }
}

/// A preset's starter: base targets (species, mol/L) in rate-law order, the timing line, the
/// mixing rule and the stocks.
struct Starter {
    base: &'static [(&'static str, f64)],
    timing: &'static str,
    window: &'static str,
    keep_apart: &'static str,
    /// Each `[[stock]]`'s lines, without the header.
    stocks: &'static [&'static str],
    note: &'static str,
}

const BROMATE: Starter = Starter {
    base: &[("BrO3-", 0.008), ("I-", 0.002), ("H+", 0.020)],
    timing: "species = \"S2O3^2-\"\nconcentration = \"0.100 mM\"",
    window: "[\"15 s\", \"10 min\"]",
    keep_apart: "[[\"BrO3-\", \"I-\", \"H+\"], [\"S2O3^2-\", \"H+\"]]",
    note: "potassium bromate is an oxidiser and a suspected carcinogen (H271, H301, H350)",
    stocks: &[
        "name = \"KBrO3 0.0400 M\"\nsolute = \"KBrO3\"\npurity = \"99.8 %\"             # assay on your bottle\ncontains = { \"BrO3-\" = \"0.0400 M\", \"K+\" = \"0.0400 M\" }",
        "name = \"KI 0.0100 M\"\nsolute = \"KI\"\ncontains = { \"I-\" = \"0.0100 M\", \"K+\" = \"0.0100 M\" }",
        "name = \"HCl 1.00 M\"                # bench concentrate: only diluted\nsolute = \"HCl\"\ncontains = { \"H+\" = \"1.00 M\", \"Cl-\" = \"1.00 M\" }\nconcentrate = { density = \"1.18 g/mL\", mass_fraction = \"37 %\" }\nin_runs = false",
        "name = \"HCl 0.100 M\"\ncontains = { \"H+\" = \"0.100 M\", \"Cl-\" = \"0.100 M\" }\ndilute_from = \"HCl 1.00 M\"",
        "name = \"Na2S2O3 1.00 mM\"\nsolute = \"Na2S2O3·5H2O\"\ncontains = { \"S2O3^2-\" = \"1.00 mM\", \"Na+\" = \"2.00 mM\" }",
    ],
};

const PERSULFATE: Starter = Starter {
    base: &[("S2O8^2-", 0.020), ("I-", 0.040)],
    timing: "species = \"S2O3^2-\"\nconcentration = \"0.800 mM\"",
    window: "[\"15 s\", \"10 min\"]",
    keep_apart: "[[\"S2O8^2-\", \"I-\"]]",
    note: "ammonium persulfate is an oxidiser and a respiratory sensitiser (H272, H302, H315, H317, H319, H334, H335)",
    stocks: &[
        "name = \"(NH4)2S2O8 0.100 M\"\nsolute = \"(NH4)2S2O8\"\ncontains = { \"S2O8^2-\" = \"0.100 M\", \"NH4+\" = \"0.200 M\" }",
        "name = \"KI 0.200 M\"\nsolute = \"KI\"\ncontains = { \"I-\" = \"0.200 M\", \"K+\" = \"0.200 M\" }",
        "name = \"Na2S2O3 8.00 mM\"\nsolute = \"Na2S2O3·5H2O\"\ncontains = { \"S2O3^2-\" = \"8.00 mM\", \"Na+\" = \"16.0 mM\" }",
    ],
};

const PEROXIDE: Starter = Starter {
    base: &[("H2O2", 0.010), ("I-", 0.010), ("H+", 0.100)],
    timing: "species = \"S2O3^2-\"\nconcentration = \"1.00 mM\"",
    window: "[\"20 s\", \"10 min\"]",
    keep_apart: "[[\"H2O2\", \"I-\"], [\"S2O3^2-\", \"H+\"]]",
    note: "hydrogen peroxide and hydrochloric acid are corrosive to eyes and skin",
    stocks: &[
        "name = \"H2O2 0.0500 M\"\nsolute = \"H2O2\"\ncontains = { \"H2O2\" = \"0.0500 M\" }\nconcentrate = { density = \"1.01 g/mL\", mass_fraction = \"3 %\" }   # from the 3 % bottle: check its label",
        "name = \"KI 0.0500 M\"\nsolute = \"KI\"\ncontains = { \"I-\" = \"0.0500 M\", \"K+\" = \"0.0500 M\" }",
        "name = \"HCl 0.500 M\"\nsolute = \"HCl\"\ncontains = { \"H+\" = \"0.500 M\", \"Cl-\" = \"0.500 M\" }\nconcentrate = { density = \"1.18 g/mL\", mass_fraction = \"37 %\" }",
        "name = \"Na2S2O3 10.0 mM\"\nsolute = \"Na2S2O3·5H2O\"\ncontains = { \"S2O3^2-\" = \"10.0 mM\", \"Na+\" = \"20.0 mM\" }",
    ],
};

fn starter_for(preset: &str) -> Option<&'static Starter> {
    match preset {
        "bromate-iodide" => Some(&BROMATE),
        "persulfate-iodide" => Some(&PERSULFATE),
        "peroxide-iodide" => Some(&PEROXIDE),
        _ => None,
    }
}

/// Largest run count a starter offers for `species` rate-law species: the base, each doubled,
/// each at ×1.5.
pub fn max_runs(species: usize) -> u32 {
    1 + 2 * species as u32
}

/// A concentration as a spec writes it, three significant figures.
fn conc(molar: f64) -> String {
    crate::units::concentration(molar)
}

/// The starter spec, or why the options cannot make one (in words naming the flag).
pub fn starter(o: &StarterOptions) -> Result<String, String> {
    let s = starter_for(&o.preset).ok_or_else(|| {
        format!(
            "--preset {}: not a reaction preset; choose one of {}",
            o.preset,
            presets::NAMES.join(", ")
        )
    })?;
    if !(10..=100).contains(&o.volume_ml) {
        return Err(format!(
            "--volume {} mL: a starter's runs are 10 to 100 mL (whole mL), so that one 50 mL buret delivers every stock",
            o.volume_ml
        ));
    }
    let most = max_runs(s.base.len());
    if !(1..=most).contains(&o.runs) {
        return Err(format!(
            "--runs {}: a {} starter has 1 to {most} runs (the base, each of {} doubled, then each ×1.5); add more by hand",
            o.runs,
            o.preset,
            s.base.iter().map(|b| b.0).collect::<Vec<_>>().join(", ")
        ));
    }
    if !(1..=200).contains(&o.stations) {
        return Err(format!("--stations {}: give 1 to 200", o.stations));
    }
    let q = |t: &str| toml::Value::String(t.to_string()).to_string();
    let v = o.volume_ml as f64;
    // Starch: 1 mL per 50 mL of run, to the buret's 0.1 mL, at least 0.5 mL.
    let starch = ((v / 50.0 * 10.0).round() / 10.0).max(0.5);
    let mut out = String::new();
    out.push_str(&format!(
        "# A starter spec written by `clockprep init --preset {}`: it solves as written. Edit the\n\
         # title, the stocks you really have and the glassware on your bench, then run\n\
         # `clockprep plan` on it. Every concentration here is a starting point: check a new set\n\
         # with a pilot run.\n\
         # Safety: {}.\n\
         # Wear goggles and gloves, read each SDS, and follow your local rules and your\n\
         # institution's safety officer.\n\n",
        o.preset, s.note
    ));
    out.push_str(&format!(
        "[plan]\ntitle = {}\ntotal_volume = \"{} mL\"        # every run\nstations = {}                  # bench groups working from the sheets\nreplicates = 2                # trials of each run per group\noverage = \"15 %\"             # extra stock beyond the computed need\ntemperature = \"21 °C\"         # planned room temperature\nbalance = \"0.01 g\"            # readability of the balance you weigh on\n\n\
         # The same lab for several sections on several days? Remove `stations` above and give\n\
         # each section instead; stocks are then made per day or once, by how long they keep:\n\
         # [[section]]\n\
         # name = \"Mon am\"\n\
         # date = \"2027-01-11\"\n\
         # stations = 6\n\n",
        q(&o.title),
        o.volume_ml,
        o.stations
    ));
    out.push_str(&format!(
        "[timing]                      # identical in every run\n{}\nwindow = {}   # runs predicted outside this are flagged\n\n",
        s.timing, s.window
    ));
    out.push_str(&format!(
        "[reaction]\npreset = {}       # the prior rate law: calibrate it with `clockprep fit` after a pilot\n\n",
        q(&o.preset)
    ));
    out.push_str(&format!(
        "[mixing]                      # no vessel may hold all of a group before t = 0\nkeep_apart = {}\n\n",
        s.keep_apart
    ));
    out.push_str(
        "[water]\ndevices = [\"50 mL buret\"]\n\n\
         # A [[device]] is a kind of glassware on the bench; each station has its own (add\n\
         # per_station = N to limit how many). Add transfer pipets or piston pipettes you use.\n\
         [[device]]\nname = \"50 mL buret\"\nkind = \"buret\"\ncapacity = \"50 mL\"\ngraduation = \"0.10 mL\"\nclass = \"A\"\n\n",
    );
    out.push_str(
        "# Each [[stock]] is a bottle. `contains` lists every ion the solute gives, spectator ions\n\
         # included (they count in the ionic strength); the order of the keys never matters.\n",
    );
    for st in s.stocks {
        out.push_str("[[stock]]\n");
        out.push_str(st);
        out.push_str("\n\n");
    }
    out.push_str(&format!(
        "[[stock]]                     # an indicator: a fixed volume in every run, no formula\nname = \"starch 1 %\"\nfixed_volume = \"{} mL\"\nvessel = \"A\"\nnote = \"made fresh the same morning\"\n\n",
        crate::units::sig(starch, 2)
    ));
    // Runs: the base, then each species ×2, then each ×1.5.
    let mut runs: Vec<(String, Vec<(&str, f64)>)> = vec![(
        "base".into(),
        s.base.iter().map(|(sp, c)| (*sp, *c)).collect(),
    )];
    for m in [2.0, 1.5] {
        for (j, (sp, _)) in s.base.iter().enumerate() {
            let targets = s
                .base
                .iter()
                .enumerate()
                .map(|(i, (x, c))| (*x, if i == j { c * m } else { *c }))
                .collect();
            runs.push((format!("{sp} x{m}"), targets));
        }
    }
    for (name, targets) in runs.into_iter().take(o.runs as usize) {
        let t: Vec<String> = targets
            .iter()
            .map(|(sp, c)| format!("{} = {}", q(sp), q(&conc(*c))))
            .collect();
        out.push_str(&format!(
            "[[run]]\nname = {}\ntargets = {{ {} }}\n\n",
            q(&name),
            t.join(", ")
        ));
    }
    Ok(out.trim_end().to_string() + "\n")
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn refuses_options_out_of_range_naming_the_flag() {
        let bad = |f: fn(&mut StarterOptions)| {
            let mut o = StarterOptions::default();
            f(&mut o);
            starter(&o).unwrap_err()
        };
        assert!(bad(|o| o.preset = "iodate".into()).starts_with("--preset iodate"));
        assert!(bad(|o| o.volume_ml = 500).starts_with("--volume 500"));
        assert!(bad(|o| o.runs = 8).contains("1 to 7 runs"));
        assert!(bad(|o| o.stations = 0).starts_with("--stations 0"));
    }
}

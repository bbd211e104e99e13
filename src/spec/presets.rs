//! Reaction presets: rate laws of common clock reactions, written in the same form as a spec's
//! `[reaction]` table (see `src/presets/*.toml`). Every number carries its source; each one is a
//! prior to calibrate with a pilot run.

/// Preset names, in the order they are offered.
pub const NAMES: [&str; 3] = ["bromate-iodide", "persulfate-iodide", "peroxide-iodide"];

/// The TOML text of a preset.
pub fn get(name: &str) -> Option<&'static str> {
    Some(match name {
        "bromate-iodide" => include_str!("presets/bromate-iodide.toml"),
        "persulfate-iodide" => include_str!("presets/persulfate-iodide.toml"),
        "peroxide-iodide" => include_str!("presets/peroxide-iodide.toml"),
        _ => return None,
    })
}

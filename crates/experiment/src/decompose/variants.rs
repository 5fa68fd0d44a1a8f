//! Which reruns a decomposition makes.

use crate::config::{Config, TruthSwitches};

/// Name of the run with the effects as configured.
pub const ALL_EFFECTS: &str = "all-effects";
/// Name of the run with every effect off but the static beam.
pub const NUMERICAL_FLOOR: &str = "numerical-floor";

/// One rerun: a name (also its folder), what it changes, and the truth switches it uses.
#[derive(Debug, Clone, PartialEq)]
pub struct Variant {
    /// Folder-safe name, e.g. `without-squint`.
    pub name: String,
    /// One line for tables and plots, e.g. "squint off".
    pub label: String,
    /// The `[truth]` switches of this run.
    pub switches: TruthSwitches,
}

/// The effects a decomposition switches, in a fixed order: (name, label, switch accessor, is
/// the effect present in this config at all).
type Effect =
    (&'static str, &'static str, fn(&mut TruthSwitches) -> &mut bool, fn(&Config) -> bool);

fn effects() -> [Effect; 7] {
    [
        (
            "rotation",
            "beam rotation off",
            |s| &mut s.beam_rotation,
            |c| c.beam.mount == crate::config::Mount::AltAz,
        ),
        (
            "frequency-scaling",
            "beam frequency scaling off",
            |s| &mut s.beam_frequency_scaling,
            |_| true,
        ),
        ("squint", "squint off", |s| &mut s.squint, |c| c.beam.squint_fraction_of_hpbw != 0.0),
        (
            "pointing",
            "pointing errors off",
            |s| &mut s.pointing,
            |c| {
                let p = &c.beam.pointing;
                p.rms_arcsec != 0.0
                    || p.drift_arcsec_per_hour != 0.0
                    || p.offsets_arcsec.iter().any(|o| o[0] != 0.0 || o[1] != 0.0)
            },
        ),
        ("ripple", "ripple off", |s| &mut s.ripple, |c| c.beam.ripple.amplitude != 0.0),
        ("w-term", "w-term off", |s| &mut s.w_term, |_| true),
        ("noise", "noise off", |s| &mut s.noise, |_| true),
    ]
}

/// The reruns for `config`: the configured truth (`all-effects`), then `without-<effect>` for
/// every effect that is switched on and present (an effect the config does not contain, such as
/// squint 0 or an equatorial mount, costs nothing and is not rerun), then `numerical-floor`
/// with all of them off. Without a beam in the truth there is nothing but the w-term and the
/// noise to switch.
pub fn decomposition_variants(config: &Config) -> Vec<Variant> {
    let base = config.truth;
    let mut out = vec![Variant {
        name: ALL_EFFECTS.into(),
        label: "all effects as configured".into(),
        switches: base,
    }];
    let mut none = base;
    for (name, label, switch, present) in effects() {
        let mut s = base;
        let beam_effect = !matches!(name, "w-term" | "noise");
        if !*switch(&mut s) || !present(config) || (beam_effect && !base.beam) {
            continue;
        }
        *switch(&mut s) = false;
        *switch(&mut none) = false;
        out.push(Variant { name: format!("without-{name}"), label: label.into(), switches: s });
    }
    out.push(Variant {
        name: NUMERICAL_FLOOR.into(),
        label: "every effect off (numerical floor)".into(),
        switches: none,
    });
    out
}

//! A sweep as the terminal shows it: what was varied and how the scene was
//! used, the worst margin and verdict of every profile at each value, the
//! crossings with their values, the folder written, the verdict and the
//! cautions.
//!
//! Writer stage: formats a [`Sweep`]; computes nothing.

use crate::report::finding_text::margin_text;
use crate::sweep::{Crossing, SceneInput, SceneUse, Sweep, SweepWarning};
use std::path::Path;

/// `x` with `sig` significant digits, trailing zeros dropped; scientific
/// notation outside 1e-4 ≤ |x| < 1e9.
pub fn number(x: f64, sig: usize) -> String {
    if !x.is_finite() {
        return format!("{x}");
    }
    if x == 0.0 {
        return "0".to_string();
    }
    let sig = sig.clamp(1, 17);
    let exp = x.abs().log10().floor() as i32;
    let trim = |s: String| {
        if s.contains('.') {
            s.trim_end_matches('0').trim_end_matches('.').to_string()
        } else {
            s
        }
    };
    if (-4..9).contains(&exp) {
        let decimals = (sig as i32 - 1 - exp).max(0) as usize;
        trim(format!("{x:.decimals$}"))
    } else {
        let s = format!("{x:.*e}", sig - 1);
        match s.split_once('e') {
            Some((m, e)) => format!("{}e{e}", trim(m.to_string())),
            None => s,
        }
    }
}

/// `x` followed by `unit` (nothing for a plain number).
fn with_unit(x: String, unit: &str) -> String {
    if unit.is_empty() {
        x
    } else {
        format!("{x} {unit}")
    }
}

/// A value swept, with its unit: six significant digits.
pub fn value_text(x: f64, unit: &str) -> String {
    with_unit(number(x, 6), unit)
}

/// A crossing's value with its unit, with as many digits as its bracket
/// resolves (at least 4).
pub fn crossing_value_text(c: &Crossing, unit: &str) -> String {
    let width = (c.bracket[1] - c.bracket[0]).abs();
    let sig = if width > 0.0 && c.value != 0.0 {
        let digits = c.value.abs().log10().floor() - width.log10().floor() + 1.0;
        digits.clamp(4.0, 15.0) as usize
    } else {
        15
    };
    with_unit(number(c.value, sig), unit)
}

/// What a part of the scene is, in the sentence "PATH changes …".
fn scene_input_words(i: SceneInput) -> &'static str {
    match i {
        SceneInput::WebWidth => "the web's width",
        SceneInput::GroundPlane => "the ground plane",
        SceneInput::Rollers => "a roller",
        SceneInput::Conductors => "a conductor",
        SceneInput::Path => "the web path",
    }
}

/// How the sweep used the field model's scene.
pub fn scene_text(s: &Sweep) -> String {
    match s.scene {
        SceneUse::Reused => format!(
            "scene reused: the geometry does not depend on {} ({} scene, {} assessments)",
            s.path, s.scenes_built, s.assessments
        ),
        SceneUse::Rebuilt(i) => format!(
            "scene rebuilt at every value: {} changes {} ({} scenes, {} assessments)",
            s.path,
            scene_input_words(i),
            s.scenes_built,
            s.assessments
        ),
    }
}

/// One crossing: "ex-zone-2: passes up to 182.4 m/min, fails above".
pub fn crossing_text(s: &Sweep, c: &Crossing) -> String {
    let name = s.profiles.get(c.profile).map_or("?", |n| &**n);
    let (below, above) = if c.fails_below {
        ("fails", "passes")
    } else {
        ("passes", "fails")
    };
    format!(
        "{name}: {below} up to {}, {above} above",
        crossing_value_text(c, &s.unit)
    )
}

/// A warning that the line has at some values only.
pub fn warning_text(s: &Sweep, w: &SweepWarning) -> String {
    format!(
        "from {} = {}: {}",
        s.path,
        value_text(w.value, &s.unit),
        w.issue
    )
}

/// The table: one row per value, one column per profile ("0.52× pass").
pub fn sweep_table(s: &Sweep) -> String {
    use tabled::builder::Builder;
    use tabled::settings::Style;
    let mut b = Builder::default();
    let first = if s.unit.is_empty() {
        s.path.clone()
    } else {
        format!("{} [{}]", s.path, s.unit)
    };
    b.push_record(std::iter::once(first).chain(s.profiles.iter().map(|p| p.to_string())));
    for r in &s.rows {
        let cells = r.margins.iter().zip(&r.fails).map(|(m, f)| {
            let verdict = if *f { "FAIL" } else { "pass" };
            match m {
                Some(m) => format!("{} {verdict}", margin_text(*m)),
                None => "no findings".to_string(),
            }
        });
        b.push_record(std::iter::once(number(r.value, 6)).chain(cells));
    }
    let mut t = b.build();
    t.with(Style::sharp());
    t.to_string()
}

/// What `sweep` prints: the title, the scene's use, the table, the
/// crossings, the folder `dir`, the verdict and the cautions.
pub fn sweep_text(s: &Sweep, dir: &Path) -> String {
    let n = s.rows.len();
    let mut out = format!(
        "{}\nsweep of {} from {} to {} in {n} values\n{}\n\n{}\n",
        s.title,
        s.path,
        value_text(s.range[0], &s.unit),
        value_text(s.range[1], &s.unit),
        scene_text(s),
        sweep_table(s)
    );
    out.push_str(
        "each cell: the profile's worst margin (value ÷ limit of its worst finding) and its verdict there (FAIL: a finding fails)\n\n",
    );
    if s.crossings.is_empty() {
        out.push_str("crossings: none, every profile keeps its verdict over the range\n");
    } else {
        out.push_str("crossings (refined by bisection):\n");
        for c in &s.crossings {
            out.push_str(&format!("  {}\n", crossing_text(s, c)));
        }
    }
    let failing = s.rows.iter().filter(|r| r.exceeded).count();
    let verdict = if failing > 0 {
        format!("FAIL (a limit is exceeded at {failing} of {n} values)")
    } else {
        format!("PASS (no limit exceeded at any of the {n} values)")
    };
    out.push_str(&format!(
        "\nsweep: {}\nverdict: {verdict}\n\ncaution: {}\n",
        dir.display(),
        crate::CAUTIONS
    ));
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn numbers_keep_their_significant_digits() {
        assert_eq!(number(182.4, 6), "182.4");
        assert_eq!(number(75.0, 6), "75");
        assert_eq!(number(0.30000000000000004, 6), "0.3");
        assert_eq!(number(-2.5e-7, 4), "-2.5e-7");
        assert_eq!(number(1e15, 6), "1e15");
        assert_eq!(number(9.99999952, 8), "9.9999995");
        assert_eq!(number(0.0, 6), "0");
    }

    #[test]
    fn a_crossing_shows_the_digits_its_bracket_resolves() {
        let c = Crossing {
            profile: 0,
            value: 182.43716,
            si: 0.0,
            bracket: [182.4371, 182.4372],
            fails_below: false,
        };
        assert_eq!(crossing_value_text(&c, "m/min"), "182.4372 m/min");
        let c = Crossing {
            bracket: [100.0, 300.0],
            value: 200.0,
            ..c
        };
        assert_eq!(crossing_value_text(&c, ""), "200");
    }
}

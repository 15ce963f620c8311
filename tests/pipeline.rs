//! The pipeline in one place (issue #8): one scene per command, and the
//! demo's numbers unchanged by the reshaping.

use crate::util::only_report;
use clap::Parser;
use websigma::cli::Cli;
use websigma::field::scene::scenes_built_on_this_thread;

/// Runs a command in this process; returns how many scenes it built.
fn scenes_built_by(args: &[&str]) -> usize {
    let before = scenes_built_on_this_thread();
    let cli = Cli::try_parse_from(args).expect("valid command line");
    websigma::app::run(cli).expect("the command runs");
    scenes_built_on_this_thread() - before
}

// See: #8
#[test]
fn r8_one_assess_of_the_demo_builds_one_scene() {
    let dir = tempfile::tempdir().unwrap();
    let line = dir.path().join("demo.yaml");
    std::fs::write(&line, websigma::DEMO_LINE).unwrap();
    let out = dir.path().join("out");
    let (line, out) = (line.to_str().unwrap(), out.to_str().unwrap());
    assert_eq!(
        scenes_built_by(&["websigma", "assess", line, "--out", out]),
        1
    );
    // With the planner and its full re-assessments, still one.
    assert_eq!(
        scenes_built_by(&["websigma", "assess", line, "--out", out, "--plan", "2"]),
        1
    );
}

/// Agreement asked of the physics with the stored copy (relative). The copy
/// predates the closed-form moment path of the patch integral (issue 13),
/// which changes values in their last digits only: the paths all meet the
/// solver's targets (1e-9 × 0.5 of the error scale); measured within 3e-12
/// relative on the demo, 1e-10 asserted.
const PHYSICS_REL: f64 = 1e-10;

/// Numbers equal within `rel` (relative), strings and structure identical,
/// except the keys that name the run.
fn same(a: &serde_json::Value, b: &serde_json::Value, path: &str, rel: f64) {
    use serde_json::Value;
    match (a, b) {
        (Value::Number(x), Value::Number(y)) => {
            let (x, y) = (x.as_f64().unwrap(), y.as_f64().unwrap());
            assert!(
                (x - y).abs() <= rel * x.abs().max(y.abs()),
                "{path}: {x} vs {y}"
            );
        }
        (Value::Array(x), Value::Array(y)) => {
            assert_eq!(x.len(), y.len(), "{path}: lengths");
            for (i, (p, q)) in x.iter().zip(y).enumerate() {
                same(p, q, &format!("{path}[{i}]"), rel);
            }
        }
        (Value::Object(x), Value::Object(y)) => {
            let kx: Vec<_> = x.keys().collect();
            let ky: Vec<_> = y.keys().collect();
            assert_eq!(kx, ky, "{path}: keys");
            for (k, p) in x {
                if ["report_id", "created_utc", "tool_version"].contains(&k.as_str()) {
                    continue;
                }
                same(p, &y[k], &format!("{path}.{k}"), rel);
            }
        }
        _ => assert_eq!(a, b, "{path}"),
    }
}

// See: #8
#[test]
fn r8_the_demo_builds_one_scene() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().to_str().unwrap();
    assert_eq!(scenes_built_by(&["websigma", "demo", "--out", out]), 1);
}

// See: #8
#[test]
fn r8_demo_line_results_match_the_copy_stored_before_the_scene() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().to_str().unwrap();
    let line = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/tests/fixtures/baseline/demo_line.yaml"
    );
    // The stored copy is the free-space model (conductors off).
    assert_eq!(
        scenes_built_by(&[
            "websigma",
            "assess",
            line,
            "--out",
            out,
            "--conductors",
            "off"
        ]),
        1
    );
    let got: serde_json::Value = serde_json::from_str(
        &std::fs::read_to_string(only_report(dir.path()).join("results.json")).unwrap(),
    )
    .unwrap();
    let mut stored: serde_json::Value =
        serde_json::from_str(include_str!("fixtures/baseline/demo_results.json")).unwrap();
    // The physics (points, spans, readings) must not move: PHYSICS_REL,
    // the reshaping reorders no floating-point sum. The findings depend on
    // the rules, which issue #10 restated in their sources' terms (meter
    // readings, new rules, new keys, a new order): for the rules and
    // subjects in both, the value found must be the same; the verdict and
    // findings as a whole are the rules' business, tested elsewhere.
    let mut got = got;
    let findings = |v: &mut serde_json::Value| {
        for k in ["findings", "verdict", "worst_margin"] {
            v.as_object_mut().unwrap().remove(k);
        }
    };
    let key = |f: &serde_json::Value| format!("{}/{}/{}", f["profile"], f["rule"], f["subject"]);
    let got_f = got["findings"].as_array().unwrap().clone();
    let stored_f = stored["findings"].as_array().unwrap().clone();
    let mut compared = 0;
    for f in &stored_f {
        // The separation rule now compares a meter reading, not the web
        // potential: a different quantity under the same id.
        if f["rule"] == "separation" {
            continue;
        }
        if let Some(g) = got_f.iter().find(|g| key(g) == key(f)) {
            // A zone-bound span rule now judges only the part of the span
            // inside the zone (issue #12): another stretch, another value.
            if g["note"]
                .as_str()
                .is_some_and(|n| n.contains("judged on the part inside the zone"))
            {
                continue;
            }
            same(&g["value"], &f["value"], &key(f), PHYSICS_REL);
            compared += 1;
        }
    }
    assert!(compared >= 20, "{compared} findings compared");
    findings(&mut got);
    findings(&mut stored);
    // The ranges over the inputs' tolerances are new information (issue
    // #14): each holds its nominal value; the nominal values are compared.
    for k in ["uncertain", "inputs"] {
        assert!(got.as_object_mut().unwrap().remove(k).is_some(), "{k}");
    }
    for list in ["points", "spans"] {
        for item in got[list].as_array_mut().unwrap() {
            let item = item.as_object_mut().unwrap();
            let ranged: Vec<String> = item
                .keys()
                .filter(|k| k.ends_with("_low"))
                .map(|k| k.trim_end_matches("_low").to_string())
                .collect();
            assert!(!ranged.is_empty(), "{list}: no range");
            for base in ranged {
                let (lo, hi) = (
                    item[&format!("{base}_low")].clone(),
                    item[&format!("{base}_high")].clone(),
                );
                if let (Some(v), Some(lo), Some(hi)) = (
                    item.get(&base).and_then(|v| v.as_f64()),
                    lo.as_f64(),
                    hi.as_f64(),
                ) {
                    let slack = 1e-12 * v.abs();
                    assert!(
                        lo - slack <= v && v <= hi + slack,
                        "{list}.{base}: {v} outside [{lo}, {hi}]"
                    );
                }
                item.remove(&format!("{base}_low"));
                item.remove(&format!("{base}_high"));
            }
        }
    }
    // Each span's worst meter reading is new information (issue #10).
    for sp in got["spans"].as_array_mut().unwrap() {
        let sp = sp.as_object_mut().unwrap();
        assert!(sp["meter_reading"].as_f64().unwrap() > 0.0);
        for k in ["meter_reading", "meter_distance", "meter_at"] {
            sp.remove(k);
        }
    }
    // So is what was recorded with each reading (the texts as typed).
    for rd in got["readings"].as_array_mut().unwrap() {
        let rd = rd.as_object_mut().unwrap();
        assert!(rd["recorded"]["value"].is_string());
        rd.remove("recorded");
        // And where the meter reads, what the final profile gives there
        // and whether it reproduces the reading (issue #12): the residual
        // is now the reading minus that field, equal to the linear rows'
        // without passive devices (compared below).
        assert!(rd["reproduced"].is_boolean());
        for k in ["at", "normal", "model_field", "tolerance", "reproduced"] {
            rd.remove(k);
        }
    }
    // The residual is a difference of the reading and the field there,
    // now summed from the final profile rather than the rows: equal to
    // 1e-12 of the reading, not of the (small) residual.
    let stored_rd = stored["readings"].as_array_mut().unwrap();
    for (g, st) in got["readings"]
        .as_array_mut()
        .unwrap()
        .iter_mut()
        .zip(stored_rd)
    {
        let reading = st["reading"].as_f64().unwrap().abs();
        let field = st["field"].as_f64().map(f64::abs).unwrap_or(reading);
        let (a, b) = (
            g["residual"].as_f64().unwrap(),
            st["residual"].as_f64().unwrap(),
        );
        assert!(
            (a - b).abs() <= PHYSICS_REL * field.max(reading),
            "residual {a} vs {b}"
        );
        g.as_object_mut().unwrap().remove("residual");
        st.as_object_mut().unwrap().remove("residual");
    }
    same(&got, &stored, "results", PHYSICS_REL);
}

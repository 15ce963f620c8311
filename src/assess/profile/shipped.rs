//! The built-in threshold profiles and loading (reading stage of the
//! assessment, entry point): a profile is loaded by shipped name or from a
//! file, and the physical limit of air (`air-limit`) is added to every set
//! of profiles in force.

use super::checked::ThresholdProfile;
use super::validate::parse_profile;
use crate::model::ValidationError;

/// Name of the profile that is always applied (the physical limit of air).
pub const AIR_LIMIT: &str = "air-limit";

/// Largest threshold profile file read [bytes].
pub const MAX_PROFILE_BYTES: u64 = 1024 * 1024;

/// The shipped profiles, `(name, YAML text)`, one per file of
/// `profiles/thresholds/`.
pub fn shipped() -> Vec<(&'static str, &'static str)> {
    vec![
        (
            "air-limit",
            include_str!("../../../profiles/thresholds/air-limit.yaml"),
        ),
        (
            "ex-zone-0",
            include_str!("../../../profiles/thresholds/ex-zone-0.yaml"),
        ),
        (
            "ex-zone-1",
            include_str!("../../../profiles/thresholds/ex-zone-1.yaml"),
        ),
        (
            "ex-zone-2",
            include_str!("../../../profiles/thresholds/ex-zone-2.yaml"),
        ),
        (
            "operator-shock",
            include_str!("../../../profiles/thresholds/operator-shock.yaml"),
        ),
        (
            "electronics",
            include_str!("../../../profiles/thresholds/electronics.yaml"),
        ),
    ]
}

/// The profiles a line names (`assess:`) and the `extra` ones (each once,
/// in that order), with the air limit added ([`with_air_limit`]).
///
/// Errors name where the profile was asked for: the line file `line_file`
/// and `assess[i]` for the line's list, `--profile NAME` for the extra ones. The shipped names are
/// reserved: a profile file may not take one (it would replace or shadow a
/// shipped profile, and the air limit must always apply), and two profiles
/// in force may not share a name (their findings would carry the same
/// label).
pub fn load_profiles(
    names: &[String],
    extra: &[String],
    line_file: &str,
) -> anyhow::Result<Vec<ThresholdProfile>> {
    use anyhow::Context;
    let mut asked: Vec<(&String, String)> = Vec::new();
    for (i, n) in names.iter().enumerate() {
        if !asked.iter().any(|(a, _)| *a == n) {
            asked.push((
                n,
                format!("invalid line description '{line_file}': assess[{i}]"),
            ));
        }
    }
    for e in extra {
        if !asked.iter().any(|(a, _)| *a == e) {
            asked.push((e, format!("--profile {e}")));
        }
    }
    let mut out: Vec<(ThresholdProfile, String)> = Vec::new();
    for (n, place) in asked {
        let p = load_profile(n).with_context(|| place.clone())?;
        if let Some((_, first)) = out.iter().find(|(q, _)| q.name == p.name) {
            anyhow::bail!(
                "{place}: the threshold profile '{n}' is named '{}', like the one of {first}: two profiles in force need two names",
                p.name
            );
        }
        out.push((p, place));
    }
    Ok(with_air_limit(out.into_iter().map(|(p, _)| p).collect()))
}

/// Loads a shipped profile by name, or else a profile file by path. A
/// profile file named like a shipped profile is refused (the shipped names
/// are reserved).
pub fn load_profile(name_or_path: &str) -> anyhow::Result<ThresholdProfile> {
    let list = shipped();
    if let Some((_, text)) = list.iter().find(|(n, _)| *n == name_or_path) {
        return parse_profile(text, "shipped").map_err(|e| problems(name_or_path, &e));
    }
    let path = std::path::Path::new(name_or_path);
    let names: Vec<&str> = list.iter().map(|(n, _)| *n).collect();
    if !path.is_file() {
        anyhow::bail!(
            "no threshold profile '{}': give a shipped name ({}) or the path of a profile file",
            crate::safe_text::printable(name_or_path),
            names.join(", ")
        );
    }
    let text = crate::yaml::read_text(path, "threshold profile", MAX_PROFILE_BYTES)?;
    let p = parse_profile(&text, name_or_path).map_err(|e| problems(name_or_path, &e))?;
    if names.contains(&&*p.name) {
        anyhow::bail!(
            "invalid threshold profile '{name_or_path}': name: '{}' is the name of a shipped profile; the shipped names ({}) are reserved for the shipped profiles: give this profile a name of its own",
            p.name,
            names.join(", ")
        );
    }
    Ok(p)
}

fn problems(origin: &str, e: &ValidationError) -> anyhow::Error {
    let n = e.issues.len();
    let mut msg = format!(
        "invalid threshold profile '{origin}': {n} problem{}",
        if n == 1 { "" } else { "s" }
    );
    for i in &e.issues {
        msg.push_str(&format!("\n  {i}"));
    }
    anyhow::anyhow!(msg)
}

/// The profiles with the shipped `air-limit` profile added (first) unless it
/// is already there: the physical limit of air always applies. Only a shipped
/// profile can carry its name ([`load_profile`] refuses a file that takes it).
pub fn with_air_limit(mut profiles: Vec<ThresholdProfile>) -> Vec<ThresholdProfile> {
    if profiles.iter().any(|p| &*p.name == AIR_LIMIT) {
        return profiles;
    }
    // The shipped file is parsed by a test, so this cannot fail in a release.
    if let Some((_, text)) = shipped().into_iter().find(|(n, _)| *n == AIR_LIMIT)
        && let Ok(p) = parse_profile(text, "shipped")
    {
        profiles.insert(0, p);
    }
    profiles
}

//! Fuzz target: any bytes through the line parser and validator
//! (`websigma::model::parse_line`), and through the threshold-profile and
//! candidate-list parsers. Any outcome but a panic, an abort or a hang is
//! fine: the input is either a `Line` or a located `ValidationError`.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let Ok(text) = std::str::from_utf8(data) else {
        return;
    };
    if let Ok(line) = websigma::model::parse_line(text) {
        // Every accepted line prints and describes itself without a panic.
        let _ = format!("{line:?}");
        let _ = websigma::model::parse_eliminator_list(text, &line);
    }
    let _ = websigma::assess::parse_profile(text, "fuzz");
});

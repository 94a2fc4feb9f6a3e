//! The column vocabulary: which headings name [S], [I], a rate, a
//! response, a standard deviation. Every analysis reads its headers through
//! these functions, so one table means the same thing to each of them.
//! The names are common practice, no source.

/// A heading without brackets, spaces, `_`, `-`, `.`, in lower case:
/// `[S]` and `s`, `Initial rate` and `initialrate` compare equal.
pub fn normalise_name(name: &str) -> String {
    name.chars()
        .filter(|c| !matches!(c, '[' | ']' | ' ' | '_' | '-' | '.'))
        .flat_map(char::to_lowercase)
        .collect()
}

/// `S`, `[S]`, `S0`, `substrate`, `conc`, `concentration`.
pub fn is_substrate_name(name: &str) -> bool {
    matches!(normalise_name(name).as_str(), "s" | "s0" | "substrate" | "conc" | "concentration" | "substrateconcentration")
}

/// `S`, `[S]`, `S0`, `substrate` (not the bare `conc`, which may be [I]).
pub fn is_substrate_only_name(name: &str) -> bool {
    matches!(normalise_name(name).as_str(), "s" | "s0" | "substrate" | "substrateconcentration")
}

/// `conc` or `concentration`: [S] in a rate table, [I] in an inhibitor
/// series.
pub fn is_bare_concentration_name(name: &str) -> bool {
    matches!(normalise_name(name).as_str(), "conc" | "concentration")
}

/// `v`, `v0`, `vi`, `rate`, `velocity`, `initial rate`, `initial velocity`,
/// `activity`, `specific activity`, `enzyme activity`.
pub fn is_rate_name(name: &str) -> bool {
    matches!(
        normalise_name(name).as_str(),
        "v" | "v0"
            | "vi"
            | "rate"
            | "velocity"
            | "initialrate"
            | "initialvelocity"
            | "activity"
            | "specificactivity"
            | "enzymeactivity"
    )
}

/// `sd`, `sigma`, `stdev`, `error`, `standard deviation`.
pub fn is_sd_name(name: &str) -> bool {
    matches!(normalise_name(name).as_str(), "sd" | "sigma" | "stdev" | "stddev" | "error" | "sdv" | "standarddeviation")
}

/// `I`, `[I]`, `I0`, `inhibitor`, `inh`.
pub fn is_inhibitor_name(name: &str) -> bool {
    matches!(normalise_name(name).as_str(), "i" | "i0" | "inhibitor" | "inh" | "inhibitorconcentration")
}

/// The first substrate of a two-substrate reaction: `A`, `[A]`, `A0`,
/// `substrate A`, `first substrate`.
pub fn is_substrate_a_name(name: &str) -> bool {
    matches!(normalise_name(name).as_str(), "a" | "a0" | "substratea" | "firstsubstrate" | "substrate1" | "s1")
}

/// The second substrate of a two-substrate reaction: `B`, `[B]`, `B0`,
/// `substrate B`, `second substrate`, `cosubstrate`.
pub fn is_substrate_b_name(name: &str) -> bool {
    matches!(
        normalise_name(name).as_str(),
        "b" | "b0" | "substrateb" | "secondsubstrate" | "substrate2" | "s2" | "cosubstrate"
    )
}

/// A heading that holds one fixed concentration of a quantity, as the
/// matrix tables write them: `5 µM`, `5µM`, `5`, `5 (µM)`, or `NAME = 5 µM`
/// where `is_name` accepts NAME (`[I] = 5 µM`, `[B] = 0.5 mM`). Returns
/// the number and the unit written, if any; `None` when the heading is not
/// of this form.
pub fn level_heading(heading: &crate::table::ColumnHeading, is_name: &dyn Fn(&str) -> bool) -> Option<(f64, Option<String>)> {
    let mut text = heading.name.trim();
    if let Some((before, after)) = text.split_once('=') {
        if is_name(before) {
            text = after.trim();
        } else {
            return None;
        }
    }
    let end = text
        .char_indices()
        .find(|(_, c)| !(c.is_ascii_digit() || matches!(c, '.' | ',' | '-' | '+' | 'e' | 'E')))
        .map_or(text.len(), |(i, _)| i);
    let number: f64 = text[..end].replace(',', ".").parse().ok()?;
    let unit = text[end..].trim();
    let unit = if unit.is_empty() { heading.unit.clone() } else { Some(unit.to_string()) };
    number.is_finite().then_some((number, unit))
}

/// Response names that are not also rate names: `response`, `activity`,
/// `signal`, `y`, `% activity`, `% control`.
pub fn is_signal_name(name: &str) -> bool {
    matches!(normalise_name(name).as_str(), "response" | "activity" | "signal" | "y" | "%activity" | "percentactivity" | "%" | "%control")
}

/// A rate or a signal: what an inhibitor series measures.
pub fn is_response_name(name: &str) -> bool {
    is_rate_name(name) || is_signal_name(name)
}

/// `pH`: the predictor of a pH-rate profile.
pub fn is_ph_name(name: &str) -> bool {
    normalise_name(name) == "ph"
}

/// `T`, `temp`, `temperature`: the predictor of a temperature series. Only
/// the temperature analysis reads these (in a time course `t` is time), and
/// it always needs the unit (°C or K) in the heading.
pub fn is_temperature_name(name: &str) -> bool {
    matches!(normalise_name(name).as_str(), "t" | "temp" | "temperature")
}

/// A rate or a rate constant whose dependence on pH or temperature is
/// studied: the rate names, `k`, `kobs`, `kcat`, `kcat/Km`, `rate
/// constant`, `specificity constant`.
pub fn is_rate_constant_name(name: &str) -> bool {
    is_rate_name(name)
        || matches!(
            normalise_name(name).as_str(),
            "k" | "kobs" | "kcat" | "kcat/km" | "kcatkm" | "rateconstant" | "specificityconstant"
        )
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Each role with names it accepts and refuses.
    #[test]
    fn vocabulary() {
        let cases: [(&str, fn(&str) -> bool, &[&str], &[&str]); 10] = [
            ("substrate", is_substrate_name, &["[S]", "S0", "Substrate", "conc"], &["I", "v"]),
            ("rate", is_rate_name, &["v", "V0", "Initial rate", "velocity", "Specific activity", "activity"], &["v1", "signal", "% activity"]),
            ("sd", is_sd_name, &["SD", "sigma", "Standard deviation"], &["sem"]),
            ("inhibitor", is_inhibitor_name, &["[I]", "Inhibitor", "inh"], &["S", "conc"]),
            ("response", is_response_name, &["response", "% activity", "v"], &["S"]),
            ("pH", is_ph_name, &["pH", "PH", "p.H."], &["pKa", "H"]),
            ("temperature", is_temperature_name, &["T", "Temperature", "temp"], &["time", "T1"]),
            ("rate constant", is_rate_constant_name, &["kcat", "kcat/Km", "k", "k_obs", "v", "Rate constant"], &["pH", "Km"]),
            ("substrate A", is_substrate_a_name, &["[A]", "A0", "Substrate A", "first substrate"], &["S", "B", "activity"]),
            ("substrate B", is_substrate_b_name, &["[B]", "b", "substrate_B", "cosubstrate"], &["A", "S", "blank"]),
        ];
        for (role, test, yes, no) in cases {
            assert!(yes.iter().all(|n| test(n)), "{role}: {yes:?}");
            assert!(no.iter().all(|n| !test(n)), "{role}: {no:?}");
        }
    }

    /// Matrix headings: a number with an optional unit, or `NAME = value`.
    #[test]
    fn level_headings() {
        let h = |name: &str, unit: Option<&str>| crate::table::ColumnHeading { name: name.into(), unit: unit.map(str::to_string) };
        let read = |name: &str, unit: Option<&str>| level_heading(&h(name, unit), &is_substrate_b_name);
        assert_eq!(read("0.5 mM", None), Some((0.5, Some("mM".into()))));
        assert_eq!(read("[B] = 2", Some("mM")), Some((2.0, Some("mM".into()))));
        assert_eq!(read("0,25", None), Some((0.25, None)));
        assert_eq!(read("[I] = 2", None), None);
        assert_eq!(read("v", None), None);
    }
}

//! What every fuzz input must satisfy, for the `cargo fuzz` targets in
//! `fuzz/` and for the corpus replay test (`fuzz_replay.rs`) that runs the
//! same checks on stable Rust in `cargo test`.
//!
//! Each function takes raw bytes, decodes them with the core's one decoding
//! rule and runs a reader; it panics (which the fuzzer reports) when an
//! invariant fails: a reader panicked, a cell went unread without a
//! problem at its line and column, or a reported number is not finite.

use turnover_core::decode::decode_text;
use turnover_core::rates::{analyse_rates, RateRequest};
use turnover_core::table::parse_table;
use turnover_core::traces::{analyse_traces, TraceRequest};

/// Inputs longer than this are skipped: the readers are linear, and short
/// inputs let the fuzzer try more shapes per second.
const MAX_LEN: usize = 8192;

/// A valid time course for the layout target (invented numbers).
const TRACES: &str = "time (min)\tA1\tA2\tB1\n0\t0.10\t0.20\t0.05\n1\t0.20\t0.35\t0.05\n2\t0.30\t0.50\t0.05\n3\t0.40\t0.65\t0.05\n4\t0.50\t0.80\t0.05\n";

/// A valid layout for the time-course target.
const LAYOUT: &str = "trace\tS (µM)\trole\nA1\t100\tsample\nA2\t200\tsample\nB1\t\tblank\n";

/// The table reader and the whole rate analysis.
pub fn table(data: &[u8]) {
    if data.len() > MAX_LEN {
        return;
    }
    let text = decode_text(data).text;
    let table = parse_table(&text);
    for row in &table.rows {
        for (index, cell) in row.cells.iter().enumerate() {
            if let Some(value) = cell {
                assert!(value.is_finite(), "line {} column {}: {value}", row.line, index + 1);
            } else {
                assert!(
                    table.problems.iter().any(|p| p.line == row.line && p.column == Some(index + 1)),
                    "line {} column {} unread without a problem",
                    row.line,
                    index + 1
                );
            }
        }
    }
    if let Ok(analysis) = analyse_rates(&RateRequest { text, ..RateRequest::default() }) {
        let fit = &analysis.fit;
        // A fit the solver stopped on a non-finite value keeps rss = inf in
        // the record (null in JSON, "not computed" in the CLI) and says it
        // did not converge; a converged fit's rss is finite.
        assert!(fit.rss.is_finite() || !fit.converged, "rss {} of a converged fit", fit.rss);
        for p in &fit.parameters {
            assert!(p.value.is_finite(), "{} = {}", p.name, p.value);
            assert!(p.std_error.is_none_or(f64::is_finite), "SE of {}", p.name);
        }
    }
}

/// The time-course reader with a valid layout.
pub fn traces(data: &[u8]) {
    if data.len() > MAX_LEN {
        return;
    }
    let text = decode_text(data).text;
    run_traces(text, LAYOUT.to_string());
}

/// The layout reader with a valid time course.
pub fn layout(data: &[u8]) {
    if data.len() > MAX_LEN {
        return;
    }
    let text = decode_text(data).text;
    run_traces(TRACES.to_string(), text);
}

fn run_traces(traces: String, layout: String) {
    let request = TraceRequest { traces, layout, ..TraceRequest::default() };
    if let Ok(analysis) = analyse_traces(&request) {
        for trace in &analysis.traces {
            assert!(trace.rate.is_none_or(f64::is_finite), "{}: rate {:?}", trace.name, trace.rate);
            assert!(trace.rate_se.is_none_or(f64::is_finite), "{}: SE {:?}", trace.name, trace.rate_se);
        }
    }
}

//! CSV answers (`Accept: text/csv`): the points of a force curve, a stroke's series and a
//! sweep's grid as a table that a spreadsheet or a dashboard reads as it is.
//!
//! The format is RFC 4180's: records end with CRLF, the first record is a header, a field
//! holding a comma, a double quote or a line break is quoted with double quotes and its quotes
//! doubled. The header names each column by its JSON field name, whose suffix is the unit
//! (`speed_m_per_s`, `force_n`, a sweep's `tube.wall_thickness_m`), so that one name serves the
//! JSON and the table. One row per point. A value that does not exist (a sweep metric that is
//! null, a failed point) is an empty field. Numbers are written as JSON writes them (shortest
//! text that reads back to the same 64-bit value, `1e-7` style for very small or large ones).
//!
//! Presentation only: every value comes from the response record the JSON answer carries.

use crate::api::force_curve::ForceCurveResponse;
use crate::api::simulate::SimulateResponse;
use crate::api::sweep::SweepPointDto;
use crate::plot::PlotAxis;
use ringdrag_model::jobs::metrics::Metric;

/// Line end of every record (RFC 4180, section 2, rule 1).
const CRLF: &str = "\r\n";

/// One field as RFC 4180 writes it: quoted when it holds a comma, a quote or a line break.
fn field(text: &str) -> String {
    if text.contains([',', '"', '\r', '\n']) {
        format!("\"{}\"", text.replace('"', "\"\""))
    } else {
        text.to_string()
    }
}

/// A number as JSON writes it; empty for a value that does not exist or is not finite.
fn number(v: Option<f64>) -> String {
    match v {
        Some(x) if x.is_finite() => serde_json::to_string(&x).unwrap_or_default(),
        _ => String::new(),
    }
}

/// A table: the header, then the rows, each record ending with CRLF.
fn table<'a>(header: &[&str], rows: impl Iterator<Item = Vec<String>> + 'a) -> String {
    let mut out = String::new();
    let head: Vec<String> = header.iter().map(|h| field(h)).collect();
    out.push_str(&head.join(","));
    out.push_str(CRLF);
    for row in rows {
        out.push_str(&row.join(","));
        out.push_str(CRLF);
    }
    out
}

/// The force-speed curve: one row per speed, in the order of the JSON `points`.
pub fn force_curve_csv(curve: &ForceCurveResponse) -> String {
    table(
        &["speed_m_per_s", "force_n"],
        curve
            .points
            .iter()
            .map(|p| vec![number(Some(p.speed_m_per_s)), number(Some(p.force_n))]),
    )
}

/// A stroke's series: one row per sample, the columns of the JSON `series`.
pub fn stroke_csv(stroke: &SimulateResponse) -> String {
    let s = &stroke.series;
    let at = |v: &[f64], i: usize| number(v.get(i).copied());
    table(
        &[
            "time_s",
            "position_m",
            "speed_m_per_s",
            "force_n",
            "power_w",
        ],
        (0..s.time_s.len()).map(|i| {
            vec![
                at(&s.time_s, i),
                at(&s.position_m, i),
                at(&s.speed_m_per_s, i),
                at(&s.force_n, i),
                at(&s.power_w, i),
            ]
        }),
    )
}

/// A sweep: one row per point in grid order (`index` first), the varied fields in the order
/// the request listed them, the metrics in the order asked, and the point's `error` last
/// (empty when it computed).
pub fn sweep_csv(axes: &[PlotAxis], metrics: &[Metric], points: &[SweepPointDto]) -> String {
    let mut header: Vec<&str> = vec!["index"];
    header.extend(axes.iter().map(|a| a.path.as_str()));
    header.extend(metrics.iter().map(|m| m.name()));
    header.push("error");
    table(
        &header,
        points.iter().map(|p| {
            let mut row = vec![p.index.to_string()];
            row.extend(axes.iter().map(|a| number(p.inputs.get(&a.path).copied())));
            row.extend(
                metrics
                    .iter()
                    .map(|m| number(p.metrics.get(m.name()).copied().flatten())),
            );
            row.push(field(p.error.as_deref().unwrap_or_default()));
            row
        }),
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn fields_are_quoted_as_rfc_4180_says() {
        // source: RFC 4180 (Common Format and MIME Type for CSV Files), section 2, rules 6-7.
        assert_eq!(field("plain"), "plain");
        assert_eq!(field("a,b"), "\"a,b\"");
        assert_eq!(field("say \"hi\""), "\"say \"\"hi\"\"\"");
        assert_eq!(field("two\nlines"), "\"two\nlines\"");
    }

    #[test]
    fn numbers_read_back_exactly() {
        assert_eq!(number(Some(0.1)), "0.1");
        assert_eq!(number(Some(1e-7)), "1e-7");
        assert_eq!(number(None), "");
        assert_eq!(number(Some(f64::NAN)), "");
        let x = 0.123_456_789_012_345_67;
        assert_eq!(number(Some(x)).parse::<f64>().ok(), Some(x));
    }

    #[test]
    fn a_sweep_row_carries_inputs_then_metrics_in_the_asked_order() {
        let axes = [PlotAxis {
            path: "tube.wall_thickness_m".into(),
            values: vec![0.001],
        }];
        let asked = [Metric::TerminalSpeed, Metric::Damping];
        let point = SweepPointDto {
            index: 0,
            inputs: [("tube.wall_thickness_m".to_string(), 0.001)]
                .into_iter()
                .collect(),
            metrics: [
                ("terminal_speed_m_per_s".to_string(), Some(0.5)),
                ("damping_n_s_per_m".to_string(), None),
            ]
            .into_iter()
            .collect(),
            error: Some("bad, \"very\"".into()),
            error_estimate_relative: None,
            cautions: Vec::new(),
            caution_kinds: Vec::new(),
        };
        assert_eq!(
            sweep_csv(&axes, &asked, &[point]),
            "index,tube.wall_thickness_m,terminal_speed_m_per_s,damping_n_s_per_m,error\r\n\
             0,0.001,0.5,,\"bad, \"\"very\"\"\"\r\n"
        );
    }
}

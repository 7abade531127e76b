//! The metrics of one sweep point, kept in the order the request asked for them.
//!
//! A JSON object's members have no order by the standard (RFC 8259), but people and most
//! parsers read them in the order written: a dashboard that asked for `exit_time_s` then
//! `heat_j` expects to see them so, in JSON as in the CSV columns. A map sorted by name would
//! put them alphabetically; this record keeps the asked order.

use ringdrag_model::jobs::metrics::Metric;
use serde::ser::{Serialize, SerializeMap, Serializer};
use std::collections::BTreeMap;

/// Each metric of a point by name, in the order asked; null where the metric has no value.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct PointMetrics(Vec<(String, Option<f64>)>);

impl PointMetrics {
    /// The values of `computed`, in the order of `asked`; a metric asked but not computed
    /// (a failed point) is null. Non-finite numbers become null (JSON cannot carry them).
    pub fn in_order(computed: &BTreeMap<String, Option<f64>>, asked: &[Metric]) -> Self {
        let mut pairs: Vec<(String, Option<f64>)> = asked
            .iter()
            .map(|m| {
                let name = m.name();
                let value = computed.get(name).copied().flatten();
                (name.to_string(), value.filter(|x| x.is_finite()))
            })
            .collect();
        // Anything the model computed beyond the asked list is kept, after it.
        for (name, value) in computed {
            if !pairs.iter().any(|(n, _)| n == name) {
                pairs.push((name.clone(), value.filter(|x| x.is_finite())));
            }
        }
        Self(pairs)
    }

    /// The value of metric `name`: None when not listed, Some(None) when it has no value.
    pub fn get(&self, name: &str) -> Option<&Option<f64>> {
        self.0.iter().find(|(n, _)| n == name).map(|(_, v)| v)
    }

    /// The metrics in order.
    pub fn iter(&self) -> impl Iterator<Item = (&str, Option<f64>)> {
        self.0.iter().map(|(n, v)| (n.as_str(), *v))
    }
}

impl FromIterator<(String, Option<f64>)> for PointMetrics {
    fn from_iter<I: IntoIterator<Item = (String, Option<f64>)>>(iter: I) -> Self {
        Self(iter.into_iter().collect())
    }
}

impl Serialize for PointMetrics {
    fn serialize<S: Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        let mut map = serializer.serialize_map(Some(self.0.len()))?;
        for (name, value) in &self.0 {
            map.serialize_entry(name, value)?;
        }
        map.end()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_asked_order_is_kept_in_json() {
        let computed: BTreeMap<String, Option<f64>> = [
            ("damping_n_s_per_m".to_string(), Some(2.0)),
            ("terminal_speed_m_per_s".to_string(), None),
            ("heat_j".to_string(), Some(f64::NAN)),
        ]
        .into_iter()
        .collect();
        let asked = [Metric::TerminalSpeed, Metric::Damping, Metric::Heat];
        let m = PointMetrics::in_order(&computed, &asked);
        let json = serde_json::to_string(&m).unwrap_or_default();
        assert_eq!(
            json,
            r#"{"terminal_speed_m_per_s":null,"damping_n_s_per_m":2.0,"heat_j":null}"#
        );
        assert_eq!(m.get("damping_n_s_per_m"), Some(&Some(2.0)));
        assert_eq!(m.get("peak_force_n"), None);
    }
}

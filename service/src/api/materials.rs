//! `GET /v1/materials`: the conductor table and the magnet grade table of the model, each row
//! with its source, so that callers can pick `tube.material` and `magnets.grade` ids.

use axum::Json;
use axum::http::{HeaderValue, header};
use axum::response::{IntoResponse, Response};
use ringdrag_model::records::materials::{self, Conductor, MagnetFamily, MagnetGrade};
use serde::Serialize;
use utoipa::ToSchema;

/// A non-ferrous tube conductor.
#[derive(Debug, Clone, PartialEq, Serialize, ToSchema)]
pub struct ConductorRow {
    /// Identifier to use in `tube.material`.
    pub id: String,
    /// Human-readable name with temper.
    pub name: String,
    /// Electrical conductivity at 20 C, S/m (from the source's %IACS figure, or to four
    /// significant figures where the source gave a resistivity).
    pub conductivity_s_per_m: f64,
    /// Conductivity in percent of the International Annealed Copper Standard at 20 C (the
    /// source's figure, or to three significant figures where it gave a resistivity).
    pub iacs_percent: f64,
    /// Temperature coefficient of resistivity near 20 C, 1/K.
    pub resistivity_temperature_coefficient_per_k: f64,
    /// Mass density, kg/m^3.
    pub density_kg_per_m3: f64,
    /// Specific heat capacity near room temperature, J/(kg K).
    pub specific_heat_j_per_kg_k: f64,
    /// How far to trust the row, in plain words: a typical handbook value to confirm against
    /// the supplier's data sheet, or a value read from a named standard or data sheet.
    pub provenance: String,
    /// The detailed source of each value: `[read]` seen in the named source, `[memory]`
    /// recalled and not verified, `[est]` estimated.
    pub source: String,
    /// Practical remarks (temper sensitivity, magnetism after cold work...); may be empty.
    pub notes: String,
}

/// A permanent-magnet grade.
#[derive(Debug, Clone, PartialEq, Serialize, ToSchema)]
pub struct MagnetGradeRow {
    /// Identifier to use in `magnets.grade`.
    pub id: String,
    /// Material family.
    pub family: MagnetFamily,
    /// Nominal remanence at 20 C, T.
    pub remanence_t: f64,
    /// Reversible temperature coefficient of remanence, 1/K (negative).
    pub remanence_temperature_coefficient_per_k: f64,
    /// Nominal maximum working temperature, C (depends on the load line).
    pub max_working_temperature_c: f64,
    /// Mass density, kg/m^3.
    pub density_kg_per_m3: f64,
    /// Whether the grade resists demagnetisation by an opposing neighbour in an alternating
    /// stack.
    pub suits_opposed_stacks: bool,
    /// How far to trust the row, in plain words (as for conductors).
    pub provenance: String,
    /// The detailed source of each value, tagged as for conductors.
    pub source: String,
    /// Practical remarks for a buyer and a designer (coating, brittleness, temperature,
    /// stacking).
    pub notes: String,
}

/// Response of `GET /v1/materials`.
#[derive(Debug, Clone, PartialEq, Serialize, ToSchema)]
pub struct MaterialsResponse {
    /// Non-ferrous tube conductors. Ferromagnetic materials (steels, iron, nickel) are outside
    /// the model and refused in designs.
    pub conductors: Vec<ConductorRow>,
    /// Permanent-magnet grades.
    pub magnet_grades: Vec<MagnetGradeRow>,
}

impl From<&Conductor> for ConductorRow {
    fn from(c: &Conductor) -> Self {
        Self {
            id: c.id.to_string(),
            name: c.name.to_string(),
            conductivity_s_per_m: significant(c.conductivity_s_per_m, 4),
            iacs_percent: significant(c.iacs_percent, 3),
            resistivity_temperature_coefficient_per_k: c.resistivity_temperature_coefficient_per_k,
            density_kg_per_m3: c.density_kg_per_m3,
            specific_heat_j_per_kg_k: c.specific_heat_j_per_kg_k,
            provenance: materials::provenance_words(c.source).to_string(),
            source: c.source.to_string(),
            notes: c.notes.to_string(),
        }
    }
}

impl From<&MagnetGrade> for MagnetGradeRow {
    fn from(g: &MagnetGrade) -> Self {
        Self {
            id: g.id.to_string(),
            family: g.family,
            remanence_t: g.remanence_t,
            remanence_temperature_coefficient_per_k: g.remanence_temperature_coefficient_per_k,
            max_working_temperature_c: g.max_working_temperature_c,
            density_kg_per_m3: g.density_kg_per_m3,
            suits_opposed_stacks: g.suits_opposed_stacks,
            provenance: materials::provenance_words(g.source).to_string(),
            source: g.source.to_string(),
            notes: g.notes().to_string(),
        }
    }
}

/// `v` to `digits` significant figures, as the nearest 64-bit float to that decimal (so that
/// JSON writes it without a float's noise: 2.39, not 2.3946360153256707). The table's values
/// are positive and finite; anything else is returned as it is.
fn significant(v: f64, digits: usize) -> f64 {
    if !(v.is_finite() && v > 0.0) || digits == 0 {
        return v;
    }
    format!("{v:.*e}", digits - 1).parse().unwrap_or(v)
}

/// The material tables of the model.
pub fn material_tables() -> MaterialsResponse {
    MaterialsResponse {
        conductors: materials::conductors()
            .iter()
            .map(ConductorRow::from)
            .collect(),
        magnet_grades: materials::magnet_grades()
            .iter()
            .map(MagnetGradeRow::from)
            .collect(),
    }
}

/// Lists the tube conductors and magnet grades, each row with its source.
#[utoipa::path(
    get,
    path = "/v1/materials",
    tag = "reference",
    operation_id = "list_materials",
    responses(
        (status = 200, description = "Both material tables; cacheable for an hour.",
            body = MaterialsResponse),
    )
)]
pub async fn list_materials() -> Response {
    let mut response = Json(material_tables()).into_response();
    response.headers_mut().insert(
        header::CACHE_CONTROL,
        HeaderValue::from_static("public, max-age=3600"),
    );
    response
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn rows_read_as_a_customer_reads_them() {
        let tables = material_tables();
        let row = |id: &str| tables.conductors.iter().find(|c| c.id == id).cloned();
        let al = row("aluminium-6063-t5").expect("row");
        assert_eq!(al.iacs_percent, 55.0);
        assert_eq!(al.conductivity_s_per_m, 31_900_000.0);
        // 72 uOhm cm (source: ASM data sheet) is 1.3889e6 S/m, 2.3946 %IACS.
        let ss = row("stainless-304-annealed").expect("row");
        assert_eq!(ss.conductivity_s_per_m, 1_389_000.0);
        assert_eq!(ss.iacs_percent, 2.39);
        assert!(al.provenance.contains("data sheet"));
        assert!(tables.magnet_grades.iter().all(|g| !g.notes.is_empty()));
        assert_eq!(significant(0.1 + 0.2, 3), 0.3);
    }
}

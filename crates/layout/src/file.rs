//! The layout file as written: serde structs of the raw TOML, before any validation.
//!
//! Every table rejects unknown keys. Fields whose absence deserves a tailored message are
//! `Option`s here and are checked by the validating modules, which know the field paths.
//! Lengths are in the file's `units`.

use serde::Deserialize;
use toml::de::{DeTable, DeValue};

use crate::error::LayoutError;

/// The whole file.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawLayout {
    pub name: Option<String>,
    pub units: Option<String>,
    pub stackup: Option<RawStackup>,
    #[serde(default)]
    pub net: Vec<RawNet>,
    pub mesh: Option<RawMesh>,
    pub solve: Option<RawSolve>,
    #[serde(default)]
    pub port: Vec<RawPort>,
    pub sweep: Option<RawSweep>,
}

/// `[stackup]`.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawStackup {
    #[serde(default)]
    pub layers: Vec<RawLayer>,
}

/// One entry of `stackup.layers`. The keys allowed depend on `kind`; that is checked in
/// [`crate::stackup`] so that, e.g., a ground with a thickness gets a specific hint.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawLayer {
    pub name: Option<String>,
    pub kind: Option<String>,
    pub thickness: Option<f64>,
    pub eps_r: Option<f64>,
    pub loss_tangent: Option<f64>,
}

/// One `[[net]]`.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawNet {
    pub name: Option<String>,
    #[serde(default)]
    pub shapes: Vec<RawShape>,
    /// S/m.
    pub conductivity: Option<f64>,
    /// Layout units.
    pub thickness: Option<f64>,
}

/// One entry of `net[i].shapes`: a table with exactly one of the keys `trace`, `rect`, `polygon`.
#[derive(Debug, Deserialize)]
#[serde(rename_all = "lowercase", deny_unknown_fields)]
pub(crate) enum RawShape {
    Trace(RawTrace),
    Rect(RawRect),
    Polygon(RawPolygon),
}

/// `{ trace = { on, width, path } }`: a path of segments with a width.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawTrace {
    pub on: Option<String>,
    pub z: Option<f64>,
    pub width: Option<f64>,
    pub path: Option<Vec<RawPoint>>,
}

/// `{ rect = { on, min, max } }`: an axis-aligned rectangle.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawRect {
    pub on: Option<String>,
    pub z: Option<f64>,
    pub min: Option<RawPoint>,
    pub max: Option<RawPoint>,
}

/// `{ polygon = { on, points } }`: a simple polygon, closed implicitly.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawPolygon {
    pub on: Option<String>,
    pub z: Option<f64>,
    pub points: Option<Vec<RawPoint>>,
}

/// A point `[x, y]` as written; its length is checked with the field path at hand (serde's
/// fixed-size arrays would silently ignore a third coordinate).
pub(crate) type RawPoint = Vec<f64>;

/// `[mesh]`.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawMesh {
    pub max_cell: Option<f64>,
    pub edge_refine: Option<bool>,
}

/// `[solve]`.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawSolve {
    pub tolerance: Option<f64>,
}

/// One `[[port]]`.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawPort {
    pub name: Option<String>,
    pub net: Option<String>,
    pub at: Option<RawPoint>,
    pub to: Option<String>,
    /// Ohms.
    pub impedance: Option<f64>,
}

/// `[sweep]`. Frequencies in hertz; `points` is an integer so that a fractional count is a
/// type error, and signed so that zero and negative counts get a tailored message.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawSweep {
    pub start: Option<f64>,
    pub stop: Option<f64>,
    pub points: Option<i64>,
    pub spacing: Option<String>,
}

/// Reads the raw structure, turning TOML errors into [`LayoutError::Syntax`] with the path of
/// the field at the error position when it can be found.
pub(crate) fn read(text: &str, file: &str) -> Result<RawLayout, LayoutError> {
    toml::from_str::<RawLayout>(text).map_err(|e| {
        let field = e.span().map(|s| field_at(text, s.start)).unwrap_or_default();
        let message = e.to_string().trim_end().to_string();
        let hint = if e.message().contains("unknown field") {
            "check the spelling and the keys allowed here (listed above); see the format in the \
             rafter-layout documentation"
        } else if e.message().contains("unknown variant") {
            "a shape is written { trace = {...} }, { rect = {...} } or { polygon = {...} }"
        } else {
            "fix the TOML at the line and column shown"
        };
        LayoutError::Syntax { file: file.to_string(), field, message, hint: hint.to_string() }
    })
}

/// Path (`net[1].shapes[0].trace.width`) of the innermost key or value containing byte
/// `offset` of `text`; empty if the text does not parse or nothing contains the offset.
pub(crate) fn field_at(text: &str, offset: usize) -> String {
    // The recovering parser still yields the spans of what it could read (e.g. up to a
    // duplicate key).
    let (doc, _) = DeTable::parse_recoverable(text);
    let mut path = Vec::new();
    if find_in_table(doc.get_ref(), offset, &mut path) { join(&path) } else { String::new() }
}

/// One step of a field path.
enum Step {
    Key(String),
    Index(usize),
}

fn join(path: &[Step]) -> String {
    let mut s = String::new();
    for step in path {
        match step {
            Step::Key(k) => {
                if !s.is_empty() {
                    s.push('.');
                }
                s.push_str(k);
            }
            Step::Index(i) => s.push_str(&format!("[{i}]")),
        }
    }
    s
}

fn find_in_table(table: &DeTable<'_>, offset: usize, path: &mut Vec<Step>) -> bool {
    for (key, value) in table.iter() {
        path.push(Step::Key(key.get_ref().to_string()));
        if key.span().contains(&offset) {
            return true;
        }
        // Search inside first: headers such as `[[net]]` give tables whose span need not cover
        // the keys that follow them.
        if find_in_value(value.get_ref(), offset, path) || value.span().contains(&offset) {
            return true;
        }
        path.pop();
    }
    false
}

fn find_in_value(value: &DeValue<'_>, offset: usize, path: &mut Vec<Step>) -> bool {
    match value {
        DeValue::Table(t) => find_in_table(t, offset, path),
        DeValue::Array(items) => {
            for (i, item) in items.iter().enumerate() {
                path.push(Step::Index(i));
                if find_in_value(item.get_ref(), offset, path) || item.span().contains(&offset) {
                    return true;
                }
                path.pop();
            }
            false
        }
        _ => false,
    }
}

//! The error type of layout reading, validation and meshing.
//!
//! Every error names the file, the field (a path such as `net[2].shapes[0].trace.width`) and the
//! offending value, and carries a hint on how to fix it.

/// What went wrong with a layout file.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum LayoutError {
    /// The file could not be read (missing, unreadable or not UTF-8).
    #[error("{file}: cannot read the layout file: {reason} (hint: {hint})")]
    Read {
        /// The path as given.
        file: String,
        /// The operating system's reason.
        reason: String,
        /// How to fix it.
        hint: String,
    },
    /// The text is not valid TOML, or a value has the wrong type, or a key is unknown or missing.
    /// `message` is the TOML reader's own message, with line and column.
    #[error("{file}: {field}: {message}\n(hint: {hint})", field = if field.is_empty() { "(document)" } else { field })]
    Syntax {
        /// The path as given.
        file: String,
        /// Best-effort path of the field at the error position (empty when unknown).
        field: String,
        /// The TOML reader's message, including line and column.
        message: String,
        /// How to fix it.
        hint: String,
    },
    /// A value is well-formed TOML but not acceptable.
    #[error("{file}: {field} = {value}: {problem} (hint: {hint})")]
    Invalid {
        /// The path as given.
        file: String,
        /// Path of the field, e.g. `net[1].shapes[0].trace.width`.
        field: String,
        /// The offending value as written (in layout units), or `(missing)`.
        value: String,
        /// What is wrong with it.
        problem: String,
        /// How to fix it.
        hint: String,
    },
    /// A value describes something this version cannot handle yet.
    #[error("{file}: {field} = {value}: {problem} is not supported yet (hint: {hint})")]
    Unsupported {
        /// The path as given.
        file: String,
        /// Path of the field.
        field: String,
        /// The offending value as written (in layout units).
        value: String,
        /// What is not supported.
        problem: String,
        /// How to work around it.
        hint: String,
    },
}

impl LayoutError {
    /// The file the error is about.
    pub fn file(&self) -> &str {
        match self {
            Self::Read { file, .. }
            | Self::Syntax { file, .. }
            | Self::Invalid { file, .. }
            | Self::Unsupported { file, .. } => file,
        }
    }

    /// The field path the error is about (empty for unreadable files or unlocated syntax errors).
    pub fn field(&self) -> &str {
        match self {
            Self::Read { .. } => "",
            Self::Syntax { field, .. } | Self::Invalid { field, .. } | Self::Unsupported { field, .. } => {
                field
            }
        }
    }
}

/// Builds errors that all name the same file.
#[derive(Clone, Copy, Debug)]
pub(crate) struct Ctx<'a> {
    /// The file path as given.
    pub file: &'a str,
}

impl Ctx<'_> {
    /// A [`LayoutError::Invalid`] for this file.
    pub fn invalid(
        &self,
        field: impl Into<String>,
        value: impl Into<String>,
        problem: impl Into<String>,
        hint: impl Into<String>,
    ) -> LayoutError {
        LayoutError::Invalid {
            file: self.file.to_string(),
            field: field.into(),
            value: value.into(),
            problem: problem.into(),
            hint: hint.into(),
        }
    }

    /// A [`LayoutError::Unsupported`] for this file.
    pub fn unsupported(
        &self,
        field: impl Into<String>,
        value: impl Into<String>,
        problem: impl Into<String>,
        hint: impl Into<String>,
    ) -> LayoutError {
        LayoutError::Unsupported {
            file: self.file.to_string(),
            field: field.into(),
            value: value.into(),
            problem: problem.into(),
            hint: hint.into(),
        }
    }
}

/// The value shown for a field that is absent.
pub(crate) const MISSING: &str = "(missing)";

/// Formats a point `[x, y]` as written in the file.
pub(crate) fn fmt_point(p: [f64; 2]) -> String {
    format!("[{}, {}]", p[0], p[1])
}

/// Formats a list of coordinates as written in the file, e.g. `[1, 2, 3]`.
pub(crate) fn fmt_coords(c: &[f64]) -> String {
    let parts: Vec<String> = c.iter().map(|v| format!("{v}")).collect();
    format!("[{}]", parts.join(", "))
}

/// Formats a list of points as written in the file, e.g. `[[0, 0], [1, 0]]`.
pub(crate) fn fmt_points(pts: &[[f64; 2]]) -> String {
    let parts: Vec<String> = pts.iter().map(|&p| fmt_point(p)).collect();
    format!("[{}]", parts.join(", "))
}

/// Formats a string value with quotes, as it would be written in TOML.
pub(crate) fn fmt_str(s: &str) -> String {
    format!("{s:?}")
}

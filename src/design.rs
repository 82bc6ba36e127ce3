//! The design file: one linkage, in the project's own YAML format.
//!
//! ```yaml
//! name: vent opener, first try      # optional
//! units: mm                         # label, default mm
//! input_pivot: [0.0, 0.0]           # O2
//! output_pivot: [80.0, 0.0]         # O4
//! input_link: 25.0                  # r2, the crank
//! coupler: 70.0                     # r3
//! output_link: 55.0                 # r4
//! coupler_point: [30.0, 15.0]       # p along the coupler from A, q to its left
//! assembly: open                    # open | crossed
//! ```
//!
//! Synthesis writes its designs in the same format, as a YAML list; [`load_designs`] reads
//! either one mapping or a list.

use std::path::Path;

use nalgebra::Point2;
use serde::{Deserialize, Serialize};

use crate::input::{parse_yaml, read_text, InputError};
use crate::linkage::{Assembly, CouplerPoint, FourBar, LinkageError};

/// Default length unit label.
pub const DEFAULT_UNITS: &str = "mm";

/// The design file as written: raw numbers, not yet checked.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct DesignFile {
    /// Optional name of the design.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub name: Option<String>,
    /// Length unit label (default `mm`).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub units: Option<String>,
    /// Input (crank) pivot `O2`, `[x, y]`.
    pub input_pivot: [f64; 2],
    /// Output pivot `O4`, `[x, y]`.
    pub output_pivot: [f64; 2],
    /// Crank length `r2`.
    pub input_link: f64,
    /// Coupler length `r3`.
    pub coupler: f64,
    /// Output link length `r4`.
    pub output_link: f64,
    /// Coupler point `[p, q]`: `p` along the coupler from `A`, `q` to its left. Default `[0, 0]`.
    #[serde(default)]
    pub coupler_point: [f64; 2],
    /// `open` or `crossed`.
    pub assembly: Assembly,
}

/// A checked design: name, units and a valid linkage.
#[derive(Debug, Clone, PartialEq)]
pub struct Design {
    /// Name, if given.
    pub name: Option<String>,
    /// Length unit label.
    pub units: String,
    /// The linkage.
    pub linkage: FourBar,
}

impl TryFrom<DesignFile> for Design {
    type Error = LinkageError;

    fn try_from(f: DesignFile) -> Result<Self, LinkageError> {
        let linkage = FourBar::new(
            Point2::new(f.input_pivot[0], f.input_pivot[1]),
            Point2::new(f.output_pivot[0], f.output_pivot[1]),
            f.input_link,
            f.coupler,
            f.output_link,
            CouplerPoint {
                p: f.coupler_point[0],
                q: f.coupler_point[1],
            },
            f.assembly,
        )?;
        Ok(Design {
            name: f.name,
            units: f.units.unwrap_or_else(|| DEFAULT_UNITS.to_string()),
            linkage,
        })
    }
}

impl From<&Design> for DesignFile {
    fn from(d: &Design) -> Self {
        let l = &d.linkage;
        let cp = l.coupler_point();
        DesignFile {
            name: d.name.clone(),
            units: Some(d.units.clone()),
            input_pivot: [l.input_pivot().x, l.input_pivot().y],
            output_pivot: [l.output_pivot().x, l.output_pivot().y],
            input_link: l.input_link(),
            coupler: l.coupler(),
            output_link: l.output_link(),
            coupler_point: [cp.p, cp.q],
            assembly: l.assembly(),
        }
    }
}

/// Reads a design file holding one design or a list of designs (as `synth` writes them).
///
/// # Errors
/// [`InputError`] naming the file, the place and the field when the file cannot be read,
/// is not valid YAML, has unknown or missing keys, or holds an invalid linkage.
pub fn load_designs(path: &Path) -> Result<Vec<Design>, InputError> {
    let text = read_text(path)?;
    parse_designs(path, &text)
}

/// Parses design-file text (see [`load_designs`]); `path` is only used in messages.
///
/// # Errors
/// As [`load_designs`].
pub fn parse_designs(path: &Path, text: &str) -> Result<Vec<Design>, InputError> {
    let value: serde_yaml::Value = parse_yaml(path, text)?;
    // Parse the text again as the typed structure so that errors keep their line and column.
    let raws: Vec<DesignFile> = if value.is_sequence() {
        parse_yaml(path, text)?
    } else {
        vec![parse_yaml(path, text)?]
    };
    if raws.is_empty() {
        return Err(InputError::Invalid {
            path: path.to_path_buf(),
            field: "(file)".into(),
            message: "holds no design".into(),
        });
    }
    let many = raws.len() > 1;
    raws.into_iter()
        .enumerate()
        .map(|(i, raw)| {
            Design::try_from(raw).map_err(|e| InputError::Invalid {
                path: path.to_path_buf(),
                field: if many {
                    format!("design {}", i + 1)
                } else {
                    "design".into()
                },
                message: e.to_string(),
            })
        })
        .collect()
}

/// Serialises designs as a YAML list of design-file mappings.
pub fn designs_to_yaml(designs: &[Design]) -> String {
    let raw: Vec<DesignFile> = designs.iter().map(DesignFile::from).collect();
    serde_yaml::to_string(&raw).expect("plain data always serialises")
}

#[cfg(test)]
mod tests {
    use super::*;

    const VENT: &str = "name: vent opener\nunits: mm\ninput_pivot: [0.0, 0.0]\n\
        output_pivot: [80.0, 0.0]\ninput_link: 25.0\ncoupler: 70.0\noutput_link: 55.0\n\
        coupler_point: [30.0, 15.0]\nassembly: open\n";

    #[test]
    fn round_trip() {
        let d = parse_designs(Path::new("x.yaml"), VENT).unwrap();
        assert_eq!(d.len(), 1);
        let y = designs_to_yaml(&d);
        let back = parse_designs(Path::new("y.yaml"), &y).unwrap();
        assert_eq!(d, back);
    }

    #[test]
    fn unknown_key_is_named_with_suggestion() {
        let bad = VENT.replace("coupler_point", "coupler_pont");
        let e = parse_designs(Path::new("x.yaml"), &bad)
            .unwrap_err()
            .to_string();
        assert!(
            e.contains("coupler_pont") && e.contains("did you mean `coupler_point`"),
            "{e}"
        );
        assert!(e.starts_with("x.yaml:8:"), "{e}");
    }

    #[test]
    fn negative_length_is_named() {
        let bad = VENT.replace("coupler: 70.0", "coupler: -70.0");
        let e = parse_designs(Path::new("x.yaml"), &bad)
            .unwrap_err()
            .to_string();
        assert!(e.contains("coupler") && e.contains("-70"), "{e}");
    }
}

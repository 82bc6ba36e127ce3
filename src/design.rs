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
    if let Some(e) = crate::input::wrong_kind(path, &value, crate::input::FileKind::Design) {
        return Err(e);
    }
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
            let label = if many {
                format!("design {}", i + 1)
            } else {
                "design".into()
            };
            let (key, message) = match check_scale(&raw) {
                Err((key, message)) => (key.to_string(), message),
                Ok(()) => match Design::try_from(raw) {
                    Ok(d) => return Ok(d),
                    Err(e) => (linkage_field(&e), e.to_string()),
                },
            };
            // Point at the offending key: `[i].key` in a list, `key` in a single mapping.
            let steps = crate::input::field_steps(&if many {
                format!("[{i}].{key}")
            } else {
                key.to_string()
            });
            Err(match steps.and_then(|s| crate::input::locate(text, &s)) {
                Some((line, column)) => InputError::InvalidAt {
                    path: path.to_path_buf(),
                    line,
                    column,
                    field: label,
                    message,
                },
                None => InputError::Invalid {
                    path: path.to_path_buf(),
                    field: label,
                    message,
                },
            })
        })
        .collect()
}

/// Largest magnitude accepted for a length or coordinate in a design file: beyond it the
/// file is almost surely in the wrong units, and squares lose the precision the position
/// solver needs.
pub const MAX_MAGNITUDE: f64 = 1e12;

/// Smallest link length, as a fraction of the design's largest length or coordinate, that
/// the position solver's tolerance (relative to the linkage's size) can still resolve.
pub const MIN_RELATIVE_LENGTH: f64 = 1e-9;

/// Design-file field (a key path for [`crate::input::field_steps`]) that a
/// [`LinkageError`] is about.
fn linkage_field(e: &LinkageError) -> String {
    match e {
        LinkageError::BadLength { field, .. } | LinkageError::NotFinite { field, .. } => field
            .replace(".x", "[0]")
            .replace(".y", "[1]")
            .replace(".p", "[0]")
            .replace(".q", "[1]"),
        LinkageError::ZeroGround => "output_pivot".into(),
    }
}

/// Refuses numbers too large for the file's units and links too short to resolve next to
/// the rest of the design. Returns the offending key and the message. Non-finite and
/// non-positive values are left to [`FourBar::new`], which names them.
fn check_scale(f: &DesignFile) -> Result<(), (&'static str, String)> {
    scale_problem(
        [f.input_pivot[0], f.input_pivot[1]],
        [f.output_pivot[0], f.output_pivot[1]],
        [f.input_link, f.coupler, f.output_link],
        f.coupler_point,
    )
}

/// The problem, if any, that would make a design file holding `linkage` unreadable (see
/// [`MAX_MAGNITUDE`] and [`MIN_RELATIVE_LENGTH`]): synthesis rejects such candidates, so that
/// every design it writes can be read back.
pub fn linkage_scale_problem(linkage: &FourBar) -> Option<String> {
    let (a, b, cp) = (
        linkage.input_pivot(),
        linkage.output_pivot(),
        linkage.coupler_point(),
    );
    scale_problem(
        [a.x, a.y],
        [b.x, b.y],
        [
            linkage.input_link(),
            linkage.coupler(),
            linkage.output_link(),
        ],
        [cp.p, cp.q],
    )
    .err()
    .map(|(_, m)| m)
}

fn scale_problem(
    o2: [f64; 2],
    o4: [f64; 2],
    links: [f64; 3],
    cp: [f64; 2],
) -> Result<(), (&'static str, String)> {
    let numbers = [
        ("input_pivot[0]", o2[0]),
        ("input_pivot[1]", o2[1]),
        ("output_pivot[0]", o4[0]),
        ("output_pivot[1]", o4[1]),
        ("input_link", links[0]),
        ("coupler", links[1]),
        ("output_link", links[2]),
        ("coupler_point[0]", cp[0]),
        ("coupler_point[1]", cp[1]),
    ];
    let mut largest: f64 = 0.0;
    for (key, v) in numbers {
        if v.is_finite() && v.abs() > MAX_MAGNITUDE {
            return Err((
                key,
                format!(
                    "{key} = {v:e}: expected a magnitude of at most {MAX_MAGNITUDE:e}; check the units"
                ),
            ));
        }
        if v.is_finite() {
            largest = largest.max(v.abs());
        }
    }
    let ground = (o4[0] - o2[0]).hypot(o4[1] - o2[1]);
    let lengths = [
        ("output_pivot", "ground link", ground),
        ("input_link", "input_link", links[0]),
        ("coupler", "coupler", links[1]),
        ("output_link", "output_link", links[2]),
    ];
    for (key, name, v) in lengths {
        if v.is_finite() && v > 0.0 && v < MIN_RELATIVE_LENGTH * largest {
            return Err((
                key,
                format!(
                    "{name} = {v:e} is shorter than {MIN_RELATIVE_LENGTH:e} of the design's \
                     largest dimension ({largest:e}): too small for the position solver to \
                     resolve; check the units"
                ),
            ));
        }
    }
    Ok(())
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
        assert!(e.starts_with("x.yaml:6:10: design:"), "{e}");
    }

    #[test]
    fn errors_in_a_list_name_the_design_and_its_line() {
        let one = VENT.replace('\n', "\n  ").replacen("name", "- name", 1);
        let two = one.replace("output_link: 55.0", "output_link: .nan");
        let e = parse_designs(Path::new("l.yaml"), &format!("{one}\n{two}"))
            .unwrap_err()
            .to_string();
        assert!(e.starts_with("l.yaml:17:16: design 2:"), "{e}");
        assert!(e.contains("output_link") && e.contains("NaN"), "{e}");
    }

    #[test]
    fn absurd_scales_are_refused() {
        let far = VENT.replace("output_pivot: [80.0, 0.0]", "output_pivot: [1e300, 0.0]");
        let e = parse_designs(Path::new("x.yaml"), &far)
            .unwrap_err()
            .to_string();
        assert!(e.contains("output_pivot[0]") && e.contains("units"), "{e}");
        let tiny = VENT.replace("coupler: 70.0", "coupler: 1e-17");
        let e = parse_designs(Path::new("x.yaml"), &tiny)
            .unwrap_err()
            .to_string();
        assert!(e.contains("coupler") && e.contains("resolve"), "{e}");
    }
}

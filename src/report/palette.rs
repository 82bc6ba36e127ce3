//! crankwright's visual language: one colour, line style and marker per role, chosen to read
//! in colour, in black-and-white print and for readers with a colour-vision deficiency.
//!
//! # Source of the colours
//! Paul Tol's **high-contrast** qualitative scheme (P. Tol, "Colour Schemes", SRON technical
//! note SRON/EPS/TN/09-002, issue 3.2, 2021, <https://personal.sron.nl/~pault/>): blue
//! `#004488`, yellow `#DDAA33`, red `#BB5566`, with black and white. Tol designed it to stay
//! distinct for colour-blind readers *and* in greyscale (its three colours differ in lightness:
//! blue dark, red middle, yellow light), which a linkage drawing printed on an office printer
//! needs. Two tints from Tol's **pale** scheme of the same note (pale yellow `#EEEEBB`, pale
//! grey `#DDDDDD`) are backgrounds only, and the dark grey `#555555` of his **dark** scheme is
//! secondary text.
//!
//! # Roles
//! | role | colour | line | marker |
//! |---|---|---|---|
//! | crank (input link) | red | solid, link width | - |
//! | coupler plate and bar `A-B` | blue | solid bar, plate filled with the blue at low opacity | - |
//! | output link | yellow | solid, link width | - |
//! | coupler curve, coupler point | blue (the coupler traces it) | solid, thin | filled blue disc with a white ring |
//! | targets, precision points | black | error vectors solid, thin, with an arrowhead | hollow diamond with a centre dot, numbered beside it |
//! | ground line `O2-O4`, fixed pivots | black | dotted (round dots) | ring with a centre dot over a hatched bearing block |
//! | moving joints `A`, `B` | black outline | - | white-filled ring |
//! | plot series: crank, coupler, output angle | the link's colour | crank and output solid, coupler dashed | - |
//! | plot series: transmission angle | black | solid | - |
//! | plot series: desired function | black | dashed | diamonds at the precision points |
//! | plot series: generated function | yellow (the output's) | solid | - |
//!
//! Colour is never the only cue: the links are told apart by where they attach (the crank at
//! `O2`, the output at `O4`, the coupler between them) and by lightness; the curve by being a
//! thin line; targets by shape; the ground line by its dots.
//!
//! # Checked
//! The unit tests simulate how the colours that must be told apart by colour alone (crank,
//! coupler, output, black and the paper) look with protanopia, deuteranopia and tritanopia
//! (Machado, Oliveira and Fernandes 2009) and in greyscale, and require a CIEDE2000 difference
//! of at least [`MIN_DIFFERENCE`] between every pair (see [`super::colour`]).
//!
//! # In DXF
//! A DXF layer of R2000 carries an AutoCAD Color Index (ACI), not a true colour, so each colour
//! has an ACI stand-in ([`Swatch::aci`]): the index nearest to it by CIEDE2000 in the standard
//! ACI table, except black, which is ACI 7 (drawn black on a light background and white on a
//! dark one, so the ink stays visible in CAD's dark model space).

use super::style::Rgb;

/// A palette colour with its stand-in for DXF layers.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub struct Swatch {
    /// Short name of the colour in its published scheme (e.g. `high-contrast red`).
    pub name: &'static str,
    /// The colour (sRGB).
    pub rgb: Rgb,
    /// AutoCAD Color Index used for a DXF layer of this colour.
    pub aci: u8,
    /// The colour the index stands for in the standard ACI table (for ACI 7: black, as drawn
    /// on a light background).
    pub aci_rgb: Rgb,
}

/// Tol high-contrast blue `#004488`; nearest ACI 154 `(0, 63, 127)`, Delta E_00 1.8.
pub const BLUE: Swatch = Swatch {
    name: "high-contrast blue",
    rgb: Rgb(0x00, 0x44, 0x88),
    aci: 154,
    aci_rgb: Rgb(0, 63, 127),
};
/// Tol high-contrast red `#BB5566`; nearest ACI 243 `(165, 82, 103)`, Delta E_00 5.6.
pub const RED: Swatch = Swatch {
    name: "high-contrast red",
    rgb: Rgb(0xbb, 0x55, 0x66),
    aci: 243,
    aci_rgb: Rgb(165, 82, 103),
};
/// Tol high-contrast yellow `#DDAA33`; nearest ACI 40 `(255, 191, 0)`, Delta E_00 7.5.
pub const YELLOW: Swatch = Swatch {
    name: "high-contrast yellow",
    rgb: Rgb(0xdd, 0xaa, 0x33),
    aci: 40,
    aci_rgb: Rgb(255, 191, 0),
};
/// Black; ACI 7 (black on a light background, white on a dark one).
pub const BLACK: Swatch = Swatch {
    name: "high-contrast black",
    rgb: Rgb(0, 0, 0),
    aci: 7,
    aci_rgb: Rgb(0, 0, 0),
};

impl Swatch {
    /// The swatch of a colour of this palette, if it is one.
    pub fn of(rgb: Rgb) -> Option<Swatch> {
        SWATCHES.into_iter().find(|s| s.rgb == rgb)
    }
}

/// Every swatch that has a DXF stand-in.
pub const SWATCHES: [Swatch; 4] = [BLUE, RED, YELLOW, BLACK];

/// The page: white (Tol high-contrast white), so that greyscale print keeps the full range.
pub const PAPER: Rgb = Rgb(0xff, 0xff, 0xff);
/// Text, axes, outlines of joints and pivots: black.
pub const INK: Rgb = BLACK.rgb;
/// Secondary text (axis descriptions, notes): Tol's dark grey `#555555`.
pub const MUTED: Rgb = Rgb(0x55, 0x55, 0x55);
/// Grid lines: Tol's pale grey `#DDDDDD`.
pub const GRID: Rgb = Rgb(0xdd, 0xdd, 0xdd);
/// Shading of the recommended transmission-angle band: Tol's pale yellow `#EEEEBB`.
pub const BAND: Rgb = Rgb(0xee, 0xee, 0xbb);

/// The input link (crank) and the crank-angle series: red, solid.
pub const CRANK: Swatch = RED;
/// The coupler plate `A-B-C` (filled at [`PLATE_OPACITY`]), the bar `A-B` and the
/// coupler-angle series (dashed, [`COUPLER_SERIES_DASH`]): blue.
pub const COUPLER: Swatch = BLUE;
/// The output link, the output-angle series and the generated function: yellow, solid.
pub const OUTPUT: Swatch = YELLOW;
/// The coupler curve (solid, thin) and the coupler point (a filled disc with a white ring):
/// the coupler's blue, since the coupler traces the curve.
pub const CURVE: Swatch = BLUE;
/// Targets and precision points (hollow diamonds with a centre dot, numbered), error vectors
/// (thin, solid, with an arrowhead), desired-function series (dashed,
/// [`TARGET_SERIES_DASH`]) and target pose triads: black.
pub const TARGET: Swatch = BLACK;
/// The ground line `O2-O4` (dotted, [`GROUND_DOTS`]) and the fixed-pivot symbols: black.
pub const GROUND: Swatch = BLACK;
/// Moving joint rings (white fill, black outline) and the transmission-angle series: black.
pub const JOINT: Swatch = BLACK;

/// Opacity of the coupler plate's fill (the solid position; faded positions are not filled).
pub const PLATE_OPACITY: f64 = 0.16;

/// SVG `stroke-dasharray` of the ground line, pixels, with `stroke-linecap="round"` and a
/// width of 1.6 px: round dots 4.5 px apart (a near-zero dash with round caps draws a dot).
pub const GROUND_DOTS: &str = "0.1 4.5";
/// Dash of the coupler-angle series in plots, pixels: long dashes, so that the three angle
/// series differ in line style as well as colour.
pub const COUPLER_SERIES_DASH: &str = "8 3";
/// Dash of the desired (target) function series in plots, pixels.
pub const TARGET_SERIES_DASH: &str = "5 3";

/// The target marker: a square standing on its corner (a diamond) whose half-diagonal is the
/// marker size, white-filled so that the curve beneath does not hide it, outlined in black,
/// with a dot at the target itself and the target's number beside its upper right corner.
/// Returns the diamond's corners (right, top, left, bottom) around `(x, y)` for a half-diagonal
/// `r`, in the caller's coordinates.
pub fn diamond(x: f64, y: f64, r: f64) -> [(f64, f64); 4] {
    [(x + r, y), (x, y + r), (x - r, y), (x, y - r)]
}

/// Least CIEDE2000 difference (see [`super::colour::ciede2000`]) required between any two of
/// [`DISTINCT`] under every simulated vision: 15, where 1 is a just-noticeable difference
/// (a bar for colours told apart at a glance in thin lines: common practice, no source).
pub const MIN_DIFFERENCE: f64 = 15.0;
/// Least difference between the ACI stand-ins of [`DISTINCT`] (DXF layers, seen in CAD),
/// lower since the ACI table is coarse: 10 (common practice, no source).
pub const MIN_ACI_DIFFERENCE: f64 = 10.0;

/// The colours a reader must tell apart by colour alone, with the paper they stand on.
pub const DISTINCT: [(&str, Rgb); 5] = [
    ("crank", CRANK.rgb),
    ("coupler", COUPLER.rgb),
    ("output", OUTPUT.rgb),
    ("ink", INK),
    ("paper", PAPER),
];

#[cfg(test)]
mod tests {
    use super::*;
    use crate::report::colour::{difference_seen, Vision};

    /// The least difference over every pair of `colours` and every vision, with where.
    fn least(colours: &[(&'static str, Rgb)]) -> (f64, &'static str, &'static str, Vision) {
        let mut worst = (f64::INFINITY, "", "", Vision::Normal);
        for v in Vision::ALL {
            for (i, (na, a)) in colours.iter().enumerate() {
                for (nb, b) in &colours[i + 1..] {
                    let d = difference_seen(*a, *b, v);
                    if d < worst.0 {
                        worst = (d, na, nb, v);
                    }
                }
            }
        }
        worst
    }

    // Every pair that must be told apart by colour stays at least MIN_DIFFERENCE apart for
    // normal vision, the three dichromacies (Machado et al. 2009) and greyscale print.
    // Measured: least 17.7 (crank red against coupler blue in greyscale).
    #[test]
    fn roles_stay_distinct_for_colour_blind_readers_and_in_print() {
        let (d, a, b, v) = least(&DISTINCT);
        eprintln!(
            "least palette difference: {d:.2} ({a} vs {b}, {})",
            v.name()
        );
        assert!(d >= MIN_DIFFERENCE, "{a} vs {b} with {}: {d}", v.name());
    }

    // The DXF layers' ACI stand-ins keep the roles apart too (ACI 7 seen as black on a light
    // background). Measured: least 11.8 (ACI 40 against the paper in greyscale).
    #[test]
    fn aci_stand_ins_stay_distinct() {
        let aci: Vec<(&str, Rgb)> = DISTINCT
            .iter()
            .map(|(n, c)| (*n, Swatch::of(*c).map_or(*c, |s| s.aci_rgb)))
            .collect();
        let (d, a, b, v) = least(&aci);
        eprintln!("least ACI difference: {d:.2} ({a} vs {b}, {})", v.name());
        assert!(d >= MIN_ACI_DIFFERENCE, "{a} vs {b} with {}: {d}", v.name());
    }

    // The check can fail: the red and green of a widely used plotting cycle (Tableau 10's
    // `#D62728` and `#2CA02C`, matplotlib's default colours) fall to about 4.6 for a
    // deuteranope, far below the bar, though they are 72 apart for normal vision.
    #[test]
    fn the_check_rejects_a_red_green_pair() {
        let pair = [
            ("red", Rgb(0xd6, 0x27, 0x28)),
            ("green", Rgb(0x2c, 0xa0, 0x2c)),
        ];
        let (d, _, _, v) = least(&pair);
        assert!(d < MIN_DIFFERENCE);
        assert_eq!(v, Vision::Deuteranopia);
        assert!(difference_seen(pair[0].1, pair[1].1, Vision::Normal) > 70.0);
    }

    // The roles are the published scheme's colours, and every role colour has a stand-in.
    #[test]
    fn roles_use_the_published_colours() {
        assert_eq!(CRANK.rgb.hex(), "#bb5566");
        assert_eq!(COUPLER.rgb.hex(), "#004488");
        assert_eq!(OUTPUT.rgb.hex(), "#ddaa33");
        for s in [CRANK, COUPLER, OUTPUT, CURVE, TARGET, GROUND, JOINT] {
            assert_eq!(Swatch::of(s.rgb), Some(s));
        }
        assert_eq!(Swatch::of(PAPER), None);
        let d = diamond(1.0, 2.0, 0.5);
        assert_eq!(d[0], (1.5, 2.0));
        assert_eq!(d[1], (1.0, 2.5));
    }
}

//! Colour science for checking a palette: sRGB to CIELAB, the CIEDE2000 colour difference,
//! and simulated dichromatic and greyscale vision.
//!
//! - sRGB decoding and the sRGB-to-XYZ matrix: IEC 61966-2-1:1999 (the sRGB standard), with
//!   the reference white taken as the XYZ of sRGB white, so that white is `L* = 100`,
//!   `a* = b* = 0` exactly.
//! - CIELAB: CIE 15:2004, Colorimetry, the 1976 `L* a* b*` formulas.
//! - CIEDE2000: CIE 142-2001, as written out by G. Sharma, W. Wu and E. N. Dalal, "The
//!   CIEDE2000 color-difference formula: implementation notes, supplementary test data, and
//!   mathematical observations", Color Res. Appl. 30(1), 2005, eqs. (1)-(22); their Table 1
//!   test pairs check it below.
//! - Dichromacy: G. M. Machado, M. M. Oliveira and L. A. F. Fernandes, "A physiologically-based
//!   model for simulation of color vision deficiency", IEEE Trans. Vis. Comput. Graph. 15(6),
//!   2009, pp. 1291-1298: one 3x3 matrix per deficiency at severity 1.0 (protanopia,
//!   deuteranopia, tritanopia), applied to linear sRGB. The authors validate the protan and
//!   deutan cases against dichromats' judgements; their tritan matrix is less well tested.
//! - Greyscale: the colour printed in black only, keeping its luminance `Y`, i.e. its CIE
//!   lightness `L*` with `a* = b* = 0`.

use super::style::Rgb;

/// A colour in CIELAB (D65 reference white): lightness `l` in `[0, 100]`, `a` (green to red)
/// and `b` (blue to yellow).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Lab {
    /// Lightness `L*`.
    pub l: f64,
    /// `a*`, green (negative) to red (positive).
    pub a: f64,
    /// `b*`, blue (negative) to yellow (positive).
    pub b: f64,
}

/// How a colour is seen: with normal colour vision, by a dichromat (simulated after Machado,
/// Oliveira and Fernandes 2009), or printed in greyscale.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Vision {
    /// Normal trichromatic vision: the colour as it is.
    Normal,
    /// No long-wavelength (L) cones; about 1 % of men.
    Protanopia,
    /// No medium-wavelength (M) cones; about 1 % of men.
    Deuteranopia,
    /// No short-wavelength (S) cones; rare.
    Tritanopia,
    /// Printed in black only: the lightness `L*` kept, the chroma dropped.
    Greyscale,
}

impl Vision {
    /// Every kind of vision this module simulates, normal first.
    pub const ALL: [Vision; 5] = [
        Vision::Normal,
        Vision::Protanopia,
        Vision::Deuteranopia,
        Vision::Tritanopia,
        Vision::Greyscale,
    ];

    /// Lower-case name, e.g. `deuteranopia`.
    pub fn name(self) -> &'static str {
        match self {
            Vision::Normal => "normal",
            Vision::Protanopia => "protanopia",
            Vision::Deuteranopia => "deuteranopia",
            Vision::Tritanopia => "tritanopia",
            Vision::Greyscale => "greyscale",
        }
    }

    /// The Machado et al. (2009) matrix of this deficiency at severity 1.0 (their
    /// supplementary table), acting on linear sRGB; `None` for normal vision and greyscale.
    fn machado(self) -> Option<[[f64; 3]; 3]> {
        match self {
            Vision::Protanopia => Some([
                [0.152286, 1.052583, -0.204868],
                [0.114503, 0.786281, 0.099216],
                [-0.003882, -0.048116, 1.051998],
            ]),
            Vision::Deuteranopia => Some([
                [0.367322, 0.860646, -0.227968],
                [0.280085, 0.672501, 0.047413],
                [-0.011820, 0.042940, 0.968881],
            ]),
            Vision::Tritanopia => Some([
                [1.255528, -0.076749, -0.178779],
                [-0.078411, 0.930809, 0.147602],
                [0.004733, 0.691367, 0.303900],
            ]),
            Vision::Normal | Vision::Greyscale => None,
        }
    }
}

/// An 8-bit sRGB channel decoded to linear light in `[0, 1]` (IEC 61966-2-1).
pub fn srgb_to_linear(channel: u8) -> f64 {
    let c = f64::from(channel) / 255.0;
    if c <= 0.04045 {
        c / 12.92
    } else {
        ((c + 0.055) / 1.055).powf(2.4)
    }
}

/// A linear-light value encoded with the sRGB transfer curve (IEC 61966-2-1), not clamped.
pub fn linear_to_srgb(v: f64) -> f64 {
    if v <= 0.0031308 {
        12.92 * v
    } else {
        1.055 * v.powf(1.0 / 2.4) - 0.055
    }
}

/// The linear sRGB of `c` as `[r, g, b]` in `[0, 1]`.
pub fn linear_rgb(c: Rgb) -> [f64; 3] {
    [
        srgb_to_linear(c.0),
        srgb_to_linear(c.1),
        srgb_to_linear(c.2),
    ]
}

/// The sRGB-to-XYZ matrix of IEC 61966-2-1 (D65).
const SRGB_TO_XYZ: [[f64; 3]; 3] = [
    [0.4124, 0.3576, 0.1805],
    [0.2126, 0.7152, 0.0722],
    [0.0193, 0.1192, 0.9505],
];

fn mul(m: &[[f64; 3]; 3], v: [f64; 3]) -> [f64; 3] {
    [0, 1, 2].map(|i| m[i][0] * v[0] + m[i][1] * v[1] + m[i][2] * v[2])
}

/// CIELAB of a colour given in linear sRGB (values outside `[0, 1]` are clamped first: a
/// simulated colour outside the display's gamut is shown at its edge).
pub fn lab_of_linear(rgb: [f64; 3]) -> Lab {
    let clamped = rgb.map(|v| v.clamp(0.0, 1.0));
    let xyz = mul(&SRGB_TO_XYZ, clamped);
    let white = mul(&SRGB_TO_XYZ, [1.0; 3]);
    // CIE 1976: f(t) = t^(1/3) above (6/29)^3, else the linear segment that meets it.
    let f = |t: f64| {
        let d: f64 = 6.0 / 29.0;
        if t > d * d * d {
            t.cbrt()
        } else {
            t / (3.0 * d * d) + 4.0 / 29.0
        }
    };
    let [fx, fy, fz] = [0, 1, 2].map(|i| f(xyz[i] / white[i]));
    Lab {
        l: 116.0 * fy - 16.0,
        a: 500.0 * (fx - fy),
        b: 200.0 * (fy - fz),
    }
}

/// CIELAB of an sRGB colour.
pub fn lab(c: Rgb) -> Lab {
    lab_of_linear(linear_rgb(c))
}

/// The linear sRGB of `c` as seen with `vision` (not clamped; greyscale has equal channels
/// of the colour's luminance `Y`).
pub fn simulate_linear(c: Rgb, vision: Vision) -> [f64; 3] {
    let rgb = linear_rgb(c);
    match vision {
        Vision::Normal => rgb,
        Vision::Greyscale => [mul(&SRGB_TO_XYZ, rgb)[1] / mul(&SRGB_TO_XYZ, [1.0; 3])[1]; 3],
        deficient => mul(
            &deficient
                .machado()
                .expect("every other vision has a matrix"),
            rgb,
        ),
    }
}

/// CIELAB of `c` as seen with `vision`.
pub fn lab_seen(c: Rgb, vision: Vision) -> Lab {
    lab_of_linear(simulate_linear(c, vision))
}

/// The CIEDE2000 colour difference `Delta E_00` of two CIELAB colours (parametric factors
/// `kL = kC = kH = 1`), after Sharma, Wu and Dalal (2005). About 1 is a just-noticeable
/// difference.
pub fn ciede2000(x: Lab, y: Lab) -> f64 {
    use std::f64::consts::PI;
    let (deg, rad) = (180.0 / PI, PI / 180.0);
    let pow7 = |v: f64| v.powi(7);
    let c_mean = (x.a.hypot(x.b) + y.a.hypot(y.b)) / 2.0;
    let g = 0.5 * (1.0 - (pow7(c_mean) / (pow7(c_mean) + pow7(25.0))).sqrt());
    let prime = |c: Lab| {
        let a = (1.0 + g) * c.a;
        let chroma = a.hypot(c.b);
        // Hue in degrees, [0, 360); 0 for a neutral colour (eq. 4).
        let hue = if chroma == 0.0 {
            0.0
        } else {
            (c.b.atan2(a) * deg).rem_euclid(360.0)
        };
        (chroma, hue)
    };
    let ((c1, h1), (c2, h2)) = (prime(x), prime(y));
    let dl = y.l - x.l;
    let dc = c2 - c1;
    let neutral = c1 * c2 == 0.0;
    let dh = if neutral {
        0.0
    } else if (h2 - h1).abs() <= 180.0 {
        h2 - h1
    } else if h2 - h1 > 180.0 {
        h2 - h1 - 360.0
    } else {
        h2 - h1 + 360.0
    };
    let d_hue = 2.0 * (c1 * c2).sqrt() * (dh * rad / 2.0).sin();
    let l_mean = (x.l + y.l) / 2.0;
    let c_mean_p = (c1 + c2) / 2.0;
    let h_mean = if neutral {
        h1 + h2
    } else if (h1 - h2).abs() <= 180.0 {
        (h1 + h2) / 2.0
    } else if h1 + h2 < 360.0 {
        (h1 + h2 + 360.0) / 2.0
    } else {
        (h1 + h2 - 360.0) / 2.0
    };
    let t = 1.0 - 0.17 * ((h_mean - 30.0) * rad).cos()
        + 0.24 * ((2.0 * h_mean) * rad).cos()
        + 0.32 * ((3.0 * h_mean + 6.0) * rad).cos()
        - 0.20 * ((4.0 * h_mean - 63.0) * rad).cos();
    let d_theta = 30.0 * (-((h_mean - 275.0) / 25.0).powi(2)).exp();
    let r_c = 2.0 * (pow7(c_mean_p) / (pow7(c_mean_p) + pow7(25.0))).sqrt();
    let l50 = (l_mean - 50.0).powi(2);
    let s_l = 1.0 + 0.015 * l50 / (20.0 + l50).sqrt();
    let s_c = 1.0 + 0.045 * c_mean_p;
    let s_h = 1.0 + 0.015 * c_mean_p * t;
    let r_t = -(2.0 * d_theta * rad).sin() * r_c;
    let (ql, qc, qh) = (dl / s_l, dc / s_c, d_hue / s_h);
    (ql * ql + qc * qc + qh * qh + r_t * qc * qh).sqrt()
}

/// `Delta E_00` between two sRGB colours as seen with `vision`.
pub fn difference_seen(x: Rgb, y: Rgb, vision: Vision) -> f64 {
    ciede2000(lab_seen(x, vision), lab_seen(y, vision))
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    // Sharma, Wu and Dalal (2005), Table 1: pairs 1, 2, 3, 4, 7, 10, 13, 17, 18, 25, 26,
    // 27, 28, 29, 30, 31, 34 (chosen to cover hue wrap-around at 0/360 deg, the blue rotation
    // term, neutral colours and large differences), to their four decimals.
    #[test]
    fn ciede2000_matches_the_published_test_pairs() {
        let pairs = [
            ([50.0, 2.6772, -79.7751], [50.0, 0.0, -82.7485], 2.0425),
            ([50.0, 3.1571, -77.2803], [50.0, 0.0, -82.7485], 2.8615),
            ([50.0, 2.8361, -74.0200], [50.0, 0.0, -82.7485], 3.4412),
            ([50.0, -1.3802, -84.2814], [50.0, 0.0, -82.7485], 1.0000),
            ([50.0, 0.0, 0.0], [50.0, -1.0, 2.0], 2.3669),
            ([50.0, 2.4900, -0.0010], [50.0, -2.4900, 0.0010], 7.1792),
            ([50.0, -0.0010, 2.4900], [50.0, 0.0009, -2.4900], 4.8045),
            ([50.0, 2.5, 0.0], [73.0, 25.0, -18.0], 27.1492),
            ([50.0, 2.5, 0.0], [61.0, -5.0, 29.0], 22.8977),
            (
                [60.2574, -34.0099, 36.2677],
                [60.4626, -34.1751, 39.4387],
                1.2644,
            ),
            (
                [63.0109, -31.0961, -5.8663],
                [62.8187, -29.7946, -4.0864],
                1.2630,
            ),
            (
                [61.2901, 3.7196, -5.3901],
                [61.4292, 2.2480, -4.9620],
                1.8731,
            ),
            (
                [35.0831, -44.1164, 3.7933],
                [35.0232, -40.0716, 1.5901],
                1.8645,
            ),
            (
                [22.7233, 20.0904, -46.6940],
                [23.0331, 14.9730, -42.5619],
                2.0373,
            ),
            (
                [36.4612, 47.8580, 18.3852],
                [36.2715, 50.5065, 21.2231],
                1.4146,
            ),
            (
                [90.8027, -2.0831, 1.4410],
                [91.1528, -1.6435, 0.0447],
                1.4441,
            ),
            (
                [2.0776, 0.0795, -1.1350],
                [0.9033, -0.0636, -0.5514],
                0.9082,
            ),
        ];
        let lab = |v: [f64; 3]| Lab {
            l: v[0],
            a: v[1],
            b: v[2],
        };
        for (x, y, want) in pairs {
            let got = ciede2000(lab(x), lab(y));
            assert!((got - want).abs() < 5e-5, "{x:?} {y:?}: {got} vs {want}");
            // Symmetric in its arguments (Sharma et al. list pairs both ways).
            assert_relative_eq!(ciede2000(lab(y), lab(x)), got, max_relative = 1e-12);
        }
    }

    // sRGB to CIELAB against colorspacious 1.1.2 (N. J. Smith, general colour-science
    // library): cspace_convert(rgb / 255, "sRGB1", "CIELab"). It builds its sRGB matrix to
    // more digits than IEC 61966-2-1 prints, hence 0.01.
    #[test]
    fn lab_matches_a_reference_library() {
        for (c, want) in [
            (
                Rgb(0xbb, 0x55, 0x66),
                [49.5205462, 42.73958057, 10.43420796],
            ),
            (
                Rgb(0x00, 0x44, 0x88),
                [29.18848384, 9.80441601, -43.05318575],
            ),
            (
                Rgb(0xdd, 0xaa, 0x33),
                [72.46742434, 7.76577466, 64.34784087],
            ),
            (
                Rgb(0xff, 0x00, 0x00),
                [53.23138711, 80.11440251, 67.21999924],
            ),
        ] {
            let got = lab(c);
            for (g, w) in [got.l, got.a, got.b].into_iter().zip(want) {
                assert!((g - w).abs() < 0.01, "{c:?}: {got:?} vs {want:?}");
            }
        }
        let white = lab(Rgb(255, 255, 255));
        assert_relative_eq!(white.l, 100.0, epsilon = 1e-12);
        assert!(white.a.abs() < 1e-12 && white.b.abs() < 1e-12);
        assert!(lab(Rgb(0, 0, 0)).l.abs() < 1e-12);
    }

    // Dichromat simulation against colorspacious 1.1.2, which applies the same Machado et al.
    // (2009) severity-1.0 matrices: cspace_convert(rgb / 255, {"name": "sRGB1+CVD",
    // "cvd_type": "protanomaly" | "deuteranomaly" | "tritanomaly", "severity": 100},
    // "sRGB1-linear").
    #[test]
    fn dichromat_simulation_matches_a_reference_library() {
        let cases = [
            (
                Rgb(0xbb, 0x55, 0x66),
                [
                    [0.144073912, 0.141510094, 0.133477175],
                    [0.230427251, 0.206574305, 0.126760587],
                    [0.593187213, 0.065202899, 0.105535628],
                ],
            ),
            (
                Rgb(0x00, 0x44, 0x88),
                [
                    [0.01040624, 0.069878422, 0.256221937],
                    [-0.006376012, 0.050547353, 0.241021953],
                    [-0.048452136, 0.090145623, 0.11478535],
                ],
            ),
            (
                Rgb(0xdd, 0xaa, 0x33),
                [
                    [0.526444043, 0.402143995, 0.012677685],
                    [0.604007797, 0.474416951, 0.040788994],
                    [0.87104613, 0.322355389, 0.29139693],
                ],
            ),
        ];
        for (c, by_vision) in cases {
            let visions = [Vision::Protanopia, Vision::Deuteranopia, Vision::Tritanopia];
            for (v, want) in visions.into_iter().zip(by_vision) {
                let got = simulate_linear(c, v);
                for (g, w) in got.into_iter().zip(want) {
                    assert!((g - w).abs() < 1e-6, "{c:?} {v:?}: {got:?} vs {want:?}");
                }
            }
        }
        // The linear decoding itself (same library, "sRGB1" to "sRGB1-linear").
        let lin = linear_rgb(Rgb(0xbb, 0x55, 0x66));
        for (g, w) in lin.into_iter().zip([0.496932995, 0.090841711, 0.132868322]) {
            assert!((g - w).abs() < 1e-9);
        }
        assert_relative_eq!(linear_to_srgb(lin[0]), 187.0 / 255.0, max_relative = 1e-12);
    }

    // Greys stay grey for every dichromat (each Machado matrix row sums to 1, so the
    // simulation keeps neutral colours: a property the paper states), and greyscale keeps a
    // colour's lightness while dropping its chroma.
    #[test]
    fn neutral_colours_are_seen_unchanged() {
        for v in Vision::ALL {
            let g = lab_seen(Rgb(0x80, 0x80, 0x80), v);
            let n = lab(Rgb(0x80, 0x80, 0x80));
            assert!((g.l - n.l).abs() < 1e-4, "{v:?}");
            assert!(g.a.abs() < 1e-3 && g.b.abs() < 1e-3, "{v:?}");
        }
        let red = lab_seen(Rgb(0xbb, 0x55, 0x66), Vision::Greyscale);
        assert!(red.a.abs() < 1e-9 && red.b.abs() < 1e-9);
        assert_relative_eq!(red.l, lab(Rgb(0xbb, 0x55, 0x66)).l, max_relative = 1e-12);
    }
}

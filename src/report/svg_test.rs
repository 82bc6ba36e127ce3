//! Helpers for tests that read the SVG the report layer writes.

use roxmltree::{Document, Node};

/// Parses `svg` as XML, failing the test with the parser's message if it is not.
pub(crate) fn parse(svg: &str) -> Document<'_> {
    Document::parse(svg).unwrap_or_else(|e| panic!("not well-formed XML: {e}"))
}

/// Whether the node's `class` attribute contains the word `class`.
pub(crate) fn has_class(n: &Node, class: &str) -> bool {
    n.attribute("class")
        .is_some_and(|c| c.split_whitespace().any(|w| w == class))
}

/// All elements named `tag` whose class list contains `class`.
pub(crate) fn by_class<'a, 'i>(doc: &'a Document<'i>, tag: &str, class: &str) -> Vec<Node<'a, 'i>> {
    doc.descendants()
        .filter(|n| n.has_tag_name(tag) && has_class(n, class))
        .collect()
}

/// The first descendant element of `n` named `tag` with class `class`.
pub(crate) fn child<'a, 'i>(n: &Node<'a, 'i>, tag: &str, class: &str) -> Node<'a, 'i> {
    n.descendants()
        .find(|c| c.has_tag_name(tag) && has_class(c, class))
        .unwrap_or_else(|| panic!("no <{tag} class=\"{class}\"> inside"))
}

/// A numeric attribute.
pub(crate) fn attr(n: &Node, name: &str) -> f64 {
    n.attribute(name)
        .unwrap_or_else(|| panic!("no attribute {name}"))
        .parse()
        .unwrap_or_else(|e| panic!("attribute {name} not a number: {e}"))
}

/// End points `((x1, y1), (x2, y2))` of a `<line>`.
pub(crate) fn ends(n: &Node) -> ((f64, f64), (f64, f64)) {
    (
        (attr(n, "x1"), attr(n, "y1")),
        (attr(n, "x2"), attr(n, "y2")),
    )
}

/// Distance between two pixel points.
pub(crate) fn dist(p: (f64, f64), q: (f64, f64)) -> f64 {
    (p.0 - q.0).hypot(p.1 - q.1)
}

/// Number of sub-paths (`M` commands) in a path's data.
pub(crate) fn subpaths(n: &Node) -> usize {
    n.attribute("d").unwrap_or("").matches('M').count()
}

/// A crank-rocker with a tilted ground line and a coupler point off the coupler line, so
/// that a lost y flip or a swapped axis shows (lengths 7, 2, 9, 6: Grashof, input shortest).
pub(crate) fn crank_rocker() -> crate::FourBar {
    crate::FourBar::new(
        nalgebra::Point2::new(10.0, -4.0),
        nalgebra::Point2::new(10.0 + 7.0 * 0.8, -4.0 + 7.0 * 0.6),
        2.0,
        9.0,
        6.0,
        crate::CouplerPoint { p: 3.0, q: 2.0 },
        crate::Assembly::Open,
    )
    .expect("valid lengths")
}

/// Positions at the given crank angles from the ground line (degrees), from the closed-form
/// circle intersection (the reference the drawings are checked against).
pub(crate) fn closed_poses(l: &crate::FourBar, cranks_deg: &[f64]) -> Vec<crate::Pose> {
    cranks_deg
        .iter()
        .map(|c| {
            crate::closed_form(l, l.ground_angle() + c.to_radians(), l.assembly())
                .expect("a crank-rocker assembles everywhere")
        })
        .collect()
}

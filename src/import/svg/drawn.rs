//! What `usvg` draws: every path of its render tree with its fill, stroke and visibility, and
//! its outline placed on sectio's page (millimetres, y up).
//!
//! usvg resolves the parts of SVG that decide *what* is drawn — the full CSS cascade,
//! `display`, `visibility`, `<switch>`, `<use>` of elements, symbols and nested `<svg>`
//! viewports, transforms — but keeps coordinates in f32 and turns arcs into cubics. The
//! reader therefore takes from usvg the verdict on each element and its paint (which paths
//! are drawn, filled or stroked, under which fill rule), and the exact geometry from the
//! source in f64 (`shapes`). The two are paired by where they lie on the page
//! ([`Drawn::bbox`]). A path usvg draws that the reader did not place keeps usvg's outline
//! ([`Drawn::subpaths`], lines and Béziers in f32), so that nothing drawn is lost.

use std::str::FromStr;

use roxmltree::{Document, Node};
use svgtypes::{Align, AspectRatio, Transform, ViewBox};
use usvg::tiny_skia_path::PathSegment;

use super::shapes::{Edge, Subpath};
use crate::geom::curve::Affine;
use crate::geom::{BBox, Point};

/// The sheet injected into usvg. Markers (arrowheads on dimension lines and the like) are
/// annotation, not outlines: usvg is asked not to draw them. The stroke's dashes and mitre
/// limit, filters, masks and clipping do not change which elements are drawn or where, so
/// they are switched off: less work for usvg, and fewer of its debug checks reachable by odd
/// values (a mitre limit of 1e299 overflows its f32). An injected sheet loses to the file's
/// own `!important` declarations only.
const INJECTED: &str = "* { marker-start: none !important; marker-mid: none !important; \
     marker-end: none !important; stroke-dasharray: none !important; \
     stroke-dashoffset: 0 !important; stroke-miterlimit: 4 !important; \
     filter: none !important; mask: none !important; clip-path: none !important }";

/// The largest coordinate or radius (user units of the element) a file may have for usvg to
/// be asked: usvg turns an arc into cubics at a fixed tolerance of 0.1 user units, about
/// (r / 0.1)^(1/6) of them per radian (kurbo's estimate), and its path-data parser buffers
/// them with a quadratic cost; at 1e12 that is at most a few hundred per arc. Beyond it (no
/// real drawing is that large) the walk's own reading of the styles decides.
pub(super) const MAX_LOCAL_EXTENT: f64 = 1e12;

/// One path of usvg's render tree.
#[derive(Debug, Clone)]
pub(super) struct Drawn {
    /// The outline's box on the page, mm, y up (tight: Bézier extrema included).
    pub bbox: BBox,
    /// `Some(evenodd)` when filled.
    pub fill: Option<bool>,
    pub stroked: bool,
    /// usvg's visibility: false for `visibility: hidden` and for paths with no paint.
    pub visible: bool,
    /// The element's `id` (empty for copies made by `<use>`).
    pub id: String,
    /// The outline in the path's own coordinates (f32 values), and the map to the page.
    pub subpaths: Vec<Subpath>,
    pub map: Affine,
}

/// The paths usvg draws for the parsed document `doc`, placed on the page by `page` (the map
/// from the root's user units to mm, y up). `Err` holds usvg's reason when it cannot read
/// the file.
pub(super) fn drawn_paths(doc: &Document, page: &Affine) -> Result<Vec<Drawn>, String> {
    let opts = usvg::Options {
        style_sheet: Some(INJECTED.to_string()),
        ..usvg::Options::default()
    };
    // usvg is a third-party parser: a panic inside it must not end the run.
    let tree = std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| {
        usvg::Tree::from_xmltree(doc, &opts)
    }))
    .map_err(|_| "usvg failed on this file".to_string())?
    .map_err(|e| e.to_string())?;
    let size = tree.size();
    let canvas_to_user = root_transform(doc.root_element(), size.width(), size.height())
        .inverse()
        .ok_or("the page's viewBox or transform cannot be inverted")?;
    let to_page = canvas_to_user.then(page);
    let mut out = Vec::new();
    walk(tree.root(), &to_page, &mut out);
    Ok(out)
}

fn walk(g: &usvg::Group, to_page: &Affine, out: &mut Vec<Drawn>) {
    for node in g.children() {
        match node {
            usvg::Node::Group(g) => walk(g, to_page, out),
            usvg::Node::Path(p) => out.push(drawn(p, to_page)),
            _ => {}
        }
    }
}

fn drawn(p: &usvg::Path, to_page: &Affine) -> Drawn {
    let t = p.abs_transform();
    let map = Affine {
        m: [t.sx as f64, t.kx as f64, t.ky as f64, t.sy as f64],
        t: Point::new(t.tx as f64, t.ty as f64),
    }
    .then(to_page);
    let pt = |q: usvg::tiny_skia_path::Point| Point::new(q.x as f64, q.y as f64);
    let mut subpaths = Vec::new();
    let mut cur = Subpath::default();
    let (mut start, mut pos) = (Point::default(), Point::default());
    for seg in p.data().segments() {
        let (edge, end) = match seg {
            PathSegment::MoveTo(q) => {
                if !cur.edges.is_empty() {
                    subpaths.push(std::mem::take(&mut cur));
                }
                (start, pos) = (pt(q), pt(q));
                continue;
            }
            PathSegment::LineTo(q) => (Edge::Line(pos, pt(q)), pt(q)),
            PathSegment::QuadTo(c, q) => (Edge::Bezier(vec![pos, pt(c), pt(q)]), pt(q)),
            PathSegment::CubicTo(c1, c2, q) => {
                (Edge::Bezier(vec![pos, pt(c1), pt(c2), pt(q)]), pt(q))
            }
            PathSegment::Close => {
                if pos != start {
                    cur.edges.push(Edge::Line(pos, start));
                }
                cur.closed = !cur.edges.is_empty();
                if cur.closed {
                    subpaths.push(std::mem::take(&mut cur));
                }
                pos = start;
                continue;
            }
        };
        if end != pos || !matches!(edge, Edge::Line(..)) {
            cur.edges.push(edge);
        }
        pos = end;
    }
    if !cur.edges.is_empty() {
        subpaths.push(cur);
    }
    // The box on the page: line ends, and Béziers' extrema after the map (an affine image of
    // a Bézier is the Bézier of the mapped control points).
    let mut bbox = BBox::EMPTY;
    for e in subpaths.iter().flat_map(|s| &s.edges) {
        match e {
            Edge::Line(a, b) => {
                bbox.add_point(map.apply(*a));
                bbox.add_point(map.apply(*b));
            }
            Edge::Bezier(ctrl) => {
                let mapped: Vec<Point> = ctrl.iter().map(|c| map.apply(*c)).collect();
                bbox = bbox.union(&bezier_bbox(&mapped));
            }
            Edge::Arc(_) | Edge::Ellipse { .. } => {}
        }
    }
    Drawn {
        bbox,
        fill: p
            .fill()
            .map(|f| matches!(f.rule(), usvg::FillRule::EvenOdd)),
        stroked: p.stroke().is_some(),
        visible: p.is_visible(),
        id: p.id().to_string(),
        subpaths,
        map,
    }
}

/// The map from the root's user units to usvg's canvas: the root's `viewBox` fitted into the
/// canvas of `w` × `h` as `preserveAspectRatio` says (SVG 1.1 §7.8), then the root's own
/// `transform` (SVG 2 allows one), as usvg composes them.
fn root_transform(root: Node, w: f32, h: f32) -> Affine {
    let (w, h) = (w as f64, h as f64);
    let view_box = root
        .attribute("viewBox")
        .and_then(|v| ViewBox::from_str(v).ok())
        .filter(|vb| vb.w > 0.0 && vb.h > 0.0);
    let fit = match view_box {
        None => Affine::IDENTITY,
        Some(vb) => {
            let aspect = root
                .attribute("preserveAspectRatio")
                .and_then(|v| AspectRatio::from_str(v).ok())
                .unwrap_or_default();
            viewbox_fit(vb, aspect, w, h)
        }
    };
    let own = root_own_transform(root, w, h, 1.0);
    fit.then(&own)
}

/// The root's own `transform` (SVG 2 allows one) as a map of its viewport, `w` × `h` in a
/// unit of `unit_per_px` per CSS px: about its `transform-origin`, whose initial value for
/// the root is the viewport's centre (CSS Transforms 1, §6; usvg does the same), with the
/// transform's lengths (CSS px) in that unit.
pub(super) fn root_own_transform(root: Node, w: f64, h: f64, unit_per_px: f64) -> Affine {
    let Some(t) = root
        .attribute("transform")
        .and_then(|t| Transform::from_str(t).ok())
    else {
        return Affine::IDENTITY;
    };
    let own = Affine {
        m: [t.a, t.c, t.b, t.d],
        t: Point::new(t.e * unit_per_px, t.f * unit_per_px),
    };
    let offset = |len: svgtypes::Length, size: f64| match len.unit {
        svgtypes::LengthUnit::Percent => len.number / 100.0 * size,
        _ => super::user_length(len).map_or(0.0, |px| px * unit_per_px),
    };
    let origin = match root
        .attribute("transform-origin")
        .and_then(|v| svgtypes::TransformOrigin::from_str(v).ok())
    {
        Some(o) => Point::new(offset(o.x_offset, w), offset(o.y_offset, h)),
        None => Point::new(0.5 * w, 0.5 * h),
    };
    Affine::translation(Point::new(-origin.x, -origin.y))
        .then(&own)
        .then(&Affine::translation(origin))
}

/// The map that fits the viewBox `vb` into a viewport of `w` × `h` at (0, 0) as the aspect
/// ratio says: scales (equal unless `none`; `meet` the smaller, `slice` the larger), the free
/// space shared out by the alignment (SVG 1.1 §7.8, `preserveAspectRatio`).
pub(super) fn viewbox_fit(vb: ViewBox, aspect: AspectRatio, w: f64, h: f64) -> Affine {
    let (mut sx, mut sy) = (w / vb.w, h / vb.h);
    if aspect.align != Align::None {
        let s = if aspect.slice { sx.max(sy) } else { sx.min(sy) };
        (sx, sy) = (s, s);
    }
    let (fx, fy) = (w - vb.w * sx, h - vb.h * sy);
    let (ax, ay) = match aspect.align {
        Align::None | Align::XMinYMin => (0.0, 0.0),
        Align::XMidYMin => (0.5, 0.0),
        Align::XMaxYMin => (1.0, 0.0),
        Align::XMinYMid => (0.0, 0.5),
        Align::XMidYMid => (0.5, 0.5),
        Align::XMaxYMid => (1.0, 0.5),
        Align::XMinYMax => (0.0, 1.0),
        Align::XMidYMax => (0.5, 1.0),
        Align::XMaxYMax => (1.0, 1.0),
    };
    Affine {
        m: [sx, 0.0, 0.0, sy],
        t: Point::new(-vb.x * sx + ax * fx, -vb.y * sy + ay * fy),
    }
}

/// The tight box of a quadratic or cubic Bézier curve given by its control points: its ends
/// and the points where a coordinate's derivative vanishes (the roots of a linear or
/// quadratic polynomial in t ∈ (0, 1)).
pub(super) fn bezier_bbox(ctrl: &[Point]) -> BBox {
    let mut b = BBox::EMPTY;
    let (first, last) = (ctrl[0], ctrl[ctrl.len() - 1]);
    b.add_point(first);
    b.add_point(last);
    let at = |t: f64| -> Point {
        // de Casteljau.
        let mut p: Vec<Point> = ctrl.to_vec();
        for k in (1..p.len()).rev() {
            for i in 0..k {
                p[i] = p[i] * (1.0 - t) + p[i + 1] * t;
            }
        }
        p[0]
    };
    let coord = |p: Point, axis: usize| if axis == 0 { p.x } else { p.y };
    for axis in 0..2 {
        let c: Vec<f64> = ctrl.iter().map(|p| coord(*p, axis)).collect();
        // Derivative coefficients of the coordinate: a·t² + b·t + c0.
        let (a, bq, c0) = if c.len() == 3 {
            (0.0, 2.0 * (c[2] - 2.0 * c[1] + c[0]), 2.0 * (c[1] - c[0]))
        } else {
            (
                3.0 * (-c[0] + 3.0 * c[1] - 3.0 * c[2] + c[3]),
                6.0 * (c[0] - 2.0 * c[1] + c[2]),
                3.0 * (c[1] - c[0]),
            )
        };
        let mut roots = [f64::NAN; 2];
        let scale = a.abs().max(bq.abs()).max(c0.abs());
        if scale == 0.0 {
            continue;
        }
        if a.abs() <= 1e-12 * scale {
            if bq != 0.0 {
                roots[0] = -c0 / bq;
            }
        } else {
            let disc = bq * bq - 4.0 * a * c0;
            if disc >= 0.0 {
                let q = -0.5 * (bq + bq.signum() * disc.sqrt());
                roots[0] = q / a;
                if q != 0.0 {
                    roots[1] = c0 / q;
                }
            }
        }
        for t in roots {
            if t > 0.0 && t < 1.0 {
                b.add_point(at(t));
            }
        }
    }
    b
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn bezier_box_holds_the_curve_and_touches_it() {
        // A cubic bulging above its chord: its top is at t = 1/2, y = 0.75 (by de Casteljau).
        let c = [
            Point::new(0.0, 0.0),
            Point::new(0.0, 1.0),
            Point::new(1.0, 1.0),
            Point::new(1.0, 0.0),
        ];
        let b = bezier_bbox(&c);
        assert!((b.max.y - 0.75).abs() < 1e-15, "{b:?}");
        assert_eq!((b.min.x, b.max.x, b.min.y), (0.0, 1.0, 0.0));
        // A quadratic with its extreme at t = 1/2: y = 0.5.
        let q = [
            Point::new(0.0, 0.0),
            Point::new(1.0, 1.0),
            Point::new(2.0, 0.0),
        ];
        assert!((bezier_bbox(&q).max.y - 0.5).abs() < 1e-15);
    }
}

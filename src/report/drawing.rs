//! SVG drawings of profiles with their section marks, for reading a section and for
//! embedding in documents (`sectio draw`).
//!
//! # Geometry
//!
//! The sheet is drawn to scale: the `viewBox` is in drawing millimetres and the `width` and
//! `height` in paper millimetres, so one drawing millimetre is `scale` paper millimetres
//! ([`DrawStyle::scale`]; by default the largest standard scale 1:k or k:1, k = 1, 2, 5 × 10ⁿ,
//! that fits the sheet). Drawing y points up, SVG y down: every point (x, y) is written as
//! (x, −y), so a `viewBox` point (u, v) is the drawing point (u, −v). The legend lies below
//! the drawing in the same units.
//!
//! Material is one `<path>` per profile (outer loop and holes, `fill-rule="evenodd"`, so the
//! holes are open and the background shows through). Lines are `L` commands; circular arcs
//! are exact `A` commands (see [`arc_flags`]; a full circle is two half arcs); curve pieces
//! (ellipses, splines) are their chords, which the readers keep within the flattening
//! tolerance of the curve.
//!
//! # Visual language
//!
//! Sizes of marks, strokes and text are fixed in paper millimetres (a 0.35 mm pen for
//! outlines, 3 mm text), as on a technical drawing; an embedded copy shrinks them all alike.
//! Colours are from the Okabe–Ito palette (distinguishable with colour-blindness) and differ
//! in lightness too, and every mark also differs in shape or dash pattern, so the sheet
//! reads in grey print:
//!
//! - material: blue-grey fill `#5b6e82` with a darker outline `#1f2a36`; holes and the
//!   surroundings are white paper (`#ffffff`);
//! - centroid: a circle with two opposite quadrants filled, black on white (the usual
//!   centre-of-gravity symbol), drawn last so nothing covers it;
//! - principal axes: dark red `#a51c30` long dash-dot lines through the centroid, labelled 1
//!   (the axis of i1, at `theta_deg`) and 2 at their ends;
//! - shear centre: a green `#009e73` diamond with a black outline;
//! - plastic neutral axes (parallel to x and to y): orange `#e69f00` dashed lines;
//! - circumscribing circle: a thin blue `#0072b2` dotted circle;
//! - thinnest wall: a thick yellow `#f0e442` bar between its two ends, with end ticks.
//!
//! Lines and marks are cased: a wider stroke under each (white under dark colours, near
//! black under light ones), so they stay visible on the material and on the paper alike.
//! The legend explains exactly the marks drawn, with the scale and a scale bar of a round
//! length (1, 2 or 5 × 10ⁿ mm).
//!
//! Text uses the generic `sans-serif` family; the file has no scripts and no external
//! references. This module does no I/O.

use std::collections::BTreeSet;
use std::f64::consts::PI;
use std::fmt::Write as _;

use crate::geom::{Arc, BBox, CurveTable, Point, Profile, Segment};
use crate::section::SectionProps;

/// Paper colour (background and holes).
pub const PAPER: &str = "#ffffff";
/// Material fill.
pub const MATERIAL: &str = "#5b6e82";
/// Material outline.
pub const OUTLINE: &str = "#1f2a36";
/// Centroid mark (and its quadrants).
pub const CENTROID: &str = "#000000";
/// Principal axes.
pub const PRINCIPAL: &str = "#a51c30";
/// Shear centre.
pub const SHEAR_CENTRE: &str = "#009e73";
/// Plastic neutral axes.
pub const PLASTIC: &str = "#e69f00";
/// Circumscribing circle.
pub const CIRCUMSCRIBED: &str = "#0072b2";
/// Thinnest wall.
pub const THINNEST: &str = "#f0e442";
/// Casing under light marks.
const DARK_CASING: &str = "#1a1a1a";

/// Text size, paper millimetres.
const TEXT_MM: f64 = 3.0;
/// Outline pen, paper millimetres.
const PEN_MM: f64 = 0.35;
/// Margin around the drawing, paper millimetres.
const MARGIN_MM: f64 = 10.0;
/// Height of one legend row, paper millimetres.
const ROW_MM: f64 = 6.0;
/// Least width of the sheet (room for the legend), paper millimetres.
const LEGEND_WIDTH_MM: f64 = 120.0;

/// How a sheet is laid out.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DrawStyle {
    /// Paper millimetres per drawing millimetre; `None` picks the largest standard scale
    /// (1, 2 or 5 × 10ⁿ, or its inverse) at which the drawing and its margins fit within
    /// `max_width_mm` × `max_height_mm`.
    pub scale: Option<f64>,
    /// Largest width of the drawing area, paper millimetres (the legend is not counted).
    pub max_width_mm: f64,
    /// Largest height of the drawing area, paper millimetres.
    pub max_height_mm: f64,
    /// Coordinates are written to about 10^−`digits` of the drawing's extent: 6 (the
    /// default) keeps far more than any print shows; the HTML report, which holds thousands
    /// of drawings, writes 4 (still a hundredth of a millimetre on a 180 mm sheet).
    pub digits: u32,
}

impl Default for DrawStyle {
    /// An A4 page's text width and about two thirds of its height.
    fn default() -> Self {
        DrawStyle {
            scale: None,
            max_width_mm: 170.0,
            max_height_mm: 180.0,
            digits: 6,
        }
    }
}

/// One section on a sheet: its profiles (one, or several merged), its properties and the
/// label written beside it (the profile number), if any.
#[derive(Debug, Clone)]
pub struct SheetItem<'a> {
    pub label: Option<String>,
    pub profiles: Vec<&'a Profile>,
    pub props: &'a SectionProps,
}

/// The marks a sheet can carry, in legend order.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord)]
pub enum Mark {
    Centroid,
    PrincipalAxes,
    ShearCentre,
    PlasticAxes,
    Circumscribed,
    ThinnestWall,
}

impl Mark {
    /// The name used as the mark's class and the legend entry's `data-mark`.
    pub fn name(self) -> &'static str {
        match self {
            Mark::Centroid => "centroid",
            Mark::PrincipalAxes => "principal-axes",
            Mark::ShearCentre => "shear-centre",
            Mark::PlasticAxes => "plastic-axes",
            Mark::Circumscribed => "circumscribed-circle",
            Mark::ThinnestWall => "thinnest-wall",
        }
    }

    /// Every mark, in legend order.
    pub const ALL: [Mark; 6] = [
        Mark::Centroid,
        Mark::PrincipalAxes,
        Mark::ShearCentre,
        Mark::PlasticAxes,
        Mark::Circumscribed,
        Mark::ThinnestWall,
    ];

    /// The colour the mark is drawn in.
    pub fn colour(self) -> &'static str {
        match self {
            Mark::Centroid => CENTROID,
            Mark::PrincipalAxes => PRINCIPAL,
            Mark::ShearCentre => SHEAR_CENTRE,
            Mark::PlasticAxes => PLASTIC,
            Mark::Circumscribed => CIRCUMSCRIBED,
            Mark::ThinnestWall => THINNEST,
        }
    }

    /// What the legend says about the mark.
    pub fn legend_text(self) -> &'static str {
        match self {
            Mark::Centroid => "Centroid (elastic centre of area)",
            Mark::PrincipalAxes => "Principal axes through the centroid: 1 of I1 (major), 2 of I2",
            Mark::ShearCentre => "Shear centre",
            Mark::PlasticAxes => "Plastic neutral axes parallel to x and y (equal areas)",
            Mark::Circumscribed => "Smallest circumscribing circle",
            Mark::ThinnestWall => "Thinnest wall, between its two ends",
        }
    }
}

/// The SVG sheet of one section: `profiles` (one, or several merged into one section) with
/// the marks of `props`. `curves` is the drawing's span table (for the exact box of curve
/// pieces).
pub fn profile_svg(
    profiles: &[&Profile],
    curves: &CurveTable,
    props: &SectionProps,
    style: &DrawStyle,
) -> String {
    sheet_svg(
        &[SheetItem {
            label: None,
            profiles: profiles.to_vec(),
            props,
        }],
        curves,
        style,
    )
}

/// The SVG sheet of several sections of one drawing, each where the drawing puts it and
/// labelled with its `label`, with one legend.
pub fn sheet_svg(items: &[SheetItem], curves: &CurveTable, style: &DrawStyle) -> String {
    let extent = items
        .iter()
        .fold(BBox::EMPTY, |b, it| b.union(&item_box(it, curves)));
    let extent = if extent.is_empty() || !extent.min.is_finite() || !extent.max.is_finite() {
        BBox {
            min: Point::new(0.0, 0.0),
            max: Point::new(1.0, 1.0),
        }
    } else {
        extent
    };
    let scale = match style.scale {
        Some(s) if s.is_finite() && s > 0.0 => s,
        _ => fitting_scale(
            extent.width(),
            extent.height(),
            style.max_width_mm - 2.0 * MARGIN_MM,
            style.max_height_mm - 2.0 * MARGIN_MM,
        ),
    };
    let mut sheet = Sheet::new(extent, scale, style.digits);
    let mut drawn: BTreeSet<Mark> = BTreeSet::new();
    sheet.open();
    for it in items {
        sheet.material(it);
    }
    for it in items {
        sheet.marks(it, &mut drawn);
    }
    // The centroid last, above every other mark.
    for it in items {
        sheet.centroid(it.props.centroid);
        drawn.insert(Mark::Centroid);
    }
    sheet.legend(&drawn);
    sheet.out.push_str("</svg>\n");
    sheet.out
}

/// The box of a section with its circumscribing circle, in drawing millimetres.
fn item_box(it: &SheetItem, curves: &CurveTable) -> BBox {
    let mut b = it.props.bbox;
    for p in &it.profiles {
        for s in p
            .outer
            .segments
            .iter()
            .chain(p.holes.iter().flat_map(|h| &h.segments))
        {
            b = match s {
                Segment::Curve(c) => match curves.spans.get(c.span as usize) {
                    Some(span) => b.union(&span.bbox),
                    None => b.union(&s.bbox()),
                },
                s => b.union(&s.bbox()),
            };
        }
    }
    if let Some(x) = &it.props.extrusion {
        let r = x.circumscribed_diameter / 2.0;
        if r.is_finite() && x.circumscribed_center.is_finite() {
            let c = x.circumscribed_center;
            b.add_point(c - Point::new(r, r));
            b.add_point(c + Point::new(r, r));
        }
    }
    b
}

/// The largest standard scale s (paper per drawing millimetre: 1, 2 or 5 × 10ⁿ, n from −6
/// to 6) with s·width ≤ max_width and s·height ≤ max_height; the smallest one when none fits,
/// and 1:1 when the sizes give no bound (a drawing of no extent, sizes not finite).
pub fn fitting_scale(width: f64, height: f64, max_width: f64, max_height: f64) -> f64 {
    let fit = (max_width / width).min(max_height / height);
    // f64::min passes over a NaN, so the sizes are checked themselves.
    let sizes_ok = [width, height].iter().all(|v| v.is_finite() && *v >= 0.0);
    if !(sizes_ok && fit.is_finite() && fit > 0.0) {
        return 1.0;
    }
    let mut best = 1e-6;
    for n in -6..=6 {
        for m in [1.0, 2.0, 5.0] {
            let s = m * 10f64.powi(n);
            if s <= fit {
                best = f64::max(best, s);
            }
        }
    }
    best
}

/// The scale as drawings state it: `1:5`, `2:1`, `1:1`.
pub fn scale_label(scale: f64) -> String {
    if scale >= 1.0 {
        format!("{}:1", round_text(scale))
    } else {
        format!("1:{}", round_text(1.0 / scale))
    }
}

/// A round length (1, 2 or 5 × 10ⁿ) at most `target`, and its text with no spurious digits.
/// A target that is not a positive finite number gives 1.
pub fn round_length(target: f64) -> (f64, String) {
    if !(target.is_finite() && target > 0.0) {
        return (1.0, "1".into());
    }
    let k = target.log10().floor() as i32;
    let base = 10f64.powi(k);
    let m = if target >= 5.0 * base {
        5.0
    } else if target >= 2.0 * base {
        2.0
    } else {
        1.0
    };
    let decimals = (-k).max(0) as usize;
    (m * base, format!("{:.*}", decimals, m * base))
}

/// A number near an integer as that integer, else with up to 3 decimals.
fn round_text(x: f64) -> String {
    if (x - x.round()).abs() < 1e-9 * x.abs().max(1.0) {
        format!("{}", x.round())
    } else {
        let s = format!("{x:.3}");
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    }
}

/// SVG arc flags for a drawing arc of signed `sweep` (radians, counter-clockwise positive)
/// drawn with y flipped: `(large_arc, sweep_flag)`.
///
/// SVG's sweep flag 1 means the angle grows in SVG's own frame (x right, y down), which is
/// clockwise on the page; after the flip (x, y) → (x, −y) a counter-clockwise drawing arc is
/// clockwise in that frame, so the flag is 1 exactly when `sweep` < 0. The large-arc flag is
/// 1 when |sweep| > π (SVG 1.1, §8.3.8 and Appendix F.6.5). A full circle is not one arc
/// command (its ends coincide): [`arc_path`] writes it as two halves.
pub fn arc_flags(sweep: f64) -> (u8, u8) {
    (u8::from(sweep.abs() > PI), u8::from(sweep < 0.0))
}

/// The path commands of `arc` after the pen is at its start, y flipped: one `A`, or two for
/// a full circle (through the point half way round). A degenerate arc (no radius, not
/// finite) is its chord.
pub fn arc_path(arc: &Arc, num: &dyn Fn(f64) -> String) -> String {
    let r = arc.radius;
    if !(r.is_finite() && r > 0.0 && arc.sweep.is_finite() && arc.sweep != 0.0) {
        return format!("L{} {}", num(arc.end.x), num(-arc.end.y));
    }
    let one = |to: Point, sweep: f64| {
        let (large, flag) = arc_flags(sweep);
        format!(
            "A{} {} 0 {} {} {} {}",
            num(r),
            num(r),
            large,
            flag,
            num(to.x),
            num(-to.y)
        )
    };
    if arc.is_full_circle() || arc.start == arc.end {
        let half = arc.sweep / 2.0;
        format!("{}{}", one(arc.point_at(0.5), half), one(arc.end, half))
    } else {
        one(arc.end, arc.sweep)
    }
}

/// Text with XML's five special characters escaped (the HTML report's escaping, which
/// writes the apostrophe as `&#39;`, valid in XML too).
fn escape(text: &str) -> String {
    super::html::escape_html(text)
}

/// A sheet being written: the drawing's extent, the scale and the text so far.
struct Sheet {
    out: String,
    extent: BBox,
    scale: f64,
    /// Decimals written for drawing coordinates: about 10^−digits of the extent.
    decimals: usize,
    /// Top of the legend (SVG y) and the sheet's viewBox.
    legend_top: f64,
    view: (f64, f64, f64, f64),
}

impl Sheet {
    fn new(extent: BBox, scale: f64, digits: u32) -> Sheet {
        let size = extent.width().max(extent.height()).max(1e-9);
        let decimals =
            (i64::from(digits.min(12)) - size.log10().floor() as i64).clamp(0, 12) as usize;
        let m = MARGIN_MM / scale;
        let width = (extent.width() + 2.0 * m).max(LEGEND_WIDTH_MM / scale);
        let legend_top = -extent.min.y + m;
        let view = (extent.min.x - m, -extent.max.y - m, width, 0.0);
        Sheet {
            out: String::new(),
            extent,
            scale,
            decimals,
            legend_top,
            view,
        }
    }

    /// Paper millimetres as drawing units.
    fn u(&self, paper_mm: f64) -> f64 {
        paper_mm / self.scale
    }

    fn num(&self, x: f64) -> String {
        let x = if x.is_finite() { x } else { 0.0 };
        let s = format!("{:.*}", self.decimals, x);
        let s = if s.contains('.') {
            s.trim_end_matches('0').trim_end_matches('.').to_string()
        } else {
            s
        };
        if s == "-0" {
            "0".into()
        } else {
            s
        }
    }

    /// The point as SVG coordinates "x y" (y flipped).
    fn pt(&self, p: Point) -> String {
        format!("{} {}", self.num(p.x), self.num(-p.y))
    }

    /// The opening tag; the height is known only with the legend, so a placeholder is
    /// replaced at the end ([`Sheet::legend`]).
    fn open(&mut self) {
        self.out.push_str(
            "<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n<svg xmlns=\"http://www.w3.org/2000/svg\" version=\"1.1\" @SIZE@ font-family=\"sans-serif\">\n",
        );
        let (x, y, w) = (self.view.0, self.view.1, self.view.2);
        let _ = writeln!(
            self.out,
            "<title>Section drawing by sectio, scale {}</title>\n<rect class=\"paper\" x=\"{}\" y=\"{}\" width=\"{}\" height=\"@HEIGHT@\" fill=\"{PAPER}\"/>",
            scale_label(self.scale),
            self.num(x),
            self.num(y),
            self.num(w)
        );
    }

    /// The outline of one profile as path data: outer loop, then holes.
    fn profile_path(&self, p: &Profile) -> String {
        let mut d = String::new();
        for lp in std::iter::once(&p.outer).chain(p.holes.iter()) {
            let Some(first) = lp.segments.first() else {
                continue;
            };
            let _ = write!(d, "M{}", self.pt(first.start()));
            let num = |x: f64| self.num(x);
            for s in &lp.segments {
                match s {
                    Segment::Line { b, .. } => {
                        let _ = write!(d, "L{}", self.pt(*b));
                    }
                    Segment::Arc(arc) => d.push_str(&arc_path(arc, &num)),
                    Segment::Curve(c) => {
                        let _ = write!(d, "L{}", self.pt(c.b));
                    }
                }
            }
            d.push('Z');
        }
        d
    }

    fn material(&mut self, it: &SheetItem) {
        for p in &it.profiles {
            let d = self.profile_path(p);
            let _ = writeln!(
                self.out,
                "<path class=\"material\" d=\"{d}\" fill=\"{MATERIAL}\" fill-rule=\"evenodd\" stroke=\"{OUTLINE}\" stroke-width=\"{}\" stroke-linejoin=\"round\"/>",
                self.num(self.u(PEN_MM))
            );
        }
        if let Some(label) = &it.label {
            let b = it.props.bbox;
            let _ = writeln!(
                self.out,
                "<text class=\"label\" x=\"{}\" y=\"{}\" font-size=\"{}\" font-weight=\"bold\" fill=\"{OUTLINE}\">{}</text>",
                self.num(b.min.x),
                self.num(-b.max.y - self.u(1.5)),
                self.num(self.u(TEXT_MM * 1.2)),
                escape(label)
            );
        }
    }

    /// A cased line (a wider casing stroke under the coloured one).
    fn cased_line(
        &mut self,
        a: Point,
        b: Point,
        colour: &str,
        casing: &str,
        width_mm: f64,
        dash_mm: Option<&[f64]>,
    ) {
        let dash = dash_mm
            .map(|d| {
                let v: Vec<String> = d.iter().map(|x| self.num(self.u(*x))).collect();
                format!(" stroke-dasharray=\"{}\"", v.join(" "))
            })
            .unwrap_or_default();
        let _ = writeln!(
            self.out,
            "<path d=\"M{}L{}\" stroke=\"{casing}\" stroke-width=\"{}\" fill=\"none\" stroke-linecap=\"butt\"{dash}/>\n<path d=\"M{}L{}\" stroke=\"{colour}\" stroke-width=\"{}\" fill=\"none\" stroke-linecap=\"butt\"{dash}/>",
            self.pt(a),
            self.pt(b),
            self.num(self.u(width_mm + 0.5)),
            self.pt(a),
            self.pt(b),
            self.num(self.u(width_mm)),
        );
    }

    /// The part of the line through `c` along `dir` inside the extent grown by `grow` (slab
    /// clipping, Liang–Barsky; common practice), or `None` when it misses.
    fn clip(&self, c: Point, dir: Point, grow: f64) -> Option<(Point, Point)> {
        let (lo, hi) = (
            self.extent.min - Point::new(grow, grow),
            self.extent.max + Point::new(grow, grow),
        );
        let (mut t0, mut t1) = (f64::NEG_INFINITY, f64::INFINITY);
        for (p, d, l, h) in [(c.x, dir.x, lo.x, hi.x), (c.y, dir.y, lo.y, hi.y)] {
            if d.abs() < 1e-12 {
                if p < l || p > h {
                    return None;
                }
            } else {
                let (a, b) = ((l - p) / d, (h - p) / d);
                t0 = t0.max(a.min(b));
                t1 = t1.min(a.max(b));
            }
        }
        (t0.is_finite() && t1.is_finite() && t0 < t1).then(|| (c + dir * t0, c + dir * t1))
    }

    fn marks(&mut self, it: &SheetItem, drawn: &mut BTreeSet<Mark>) {
        let props = it.props;
        let c = props.centroid;
        let grow = self.u(MARGIN_MM * 0.6);
        // Circumscribing circle first: it lies under the others.
        if let Some(x) = &props.extrusion {
            let r = x.circumscribed_diameter / 2.0;
            if r.is_finite() && r > 0.0 && x.circumscribed_center.is_finite() {
                let _ = writeln!(
                    self.out,
                    "<g class=\"mark {}\"><circle cx=\"{}\" cy=\"{}\" r=\"{}\" fill=\"none\" stroke=\"{CIRCUMSCRIBED}\" stroke-width=\"{}\" stroke-dasharray=\"{} {}\" stroke-linecap=\"round\"/></g>",
                    Mark::Circumscribed.name(),
                    self.num(x.circumscribed_center.x),
                    self.num(-x.circumscribed_center.y),
                    self.num(r),
                    self.num(self.u(0.3)),
                    self.num(self.u(0.01)),
                    self.num(self.u(0.8)),
                );
                drawn.insert(Mark::Circumscribed);
            }
        }
        // Plastic neutral axes: y = cy + pna_x (parallel to x, positive up) and
        // x = cx + pna_y (parallel to y, positive to the right); see `PlasticProps`.
        if let Some(pl) = &props.plastic {
            let _ = writeln!(self.out, "<g class=\"mark {}\">", Mark::PlasticAxes.name());
            let mut any = false;
            for (at, dir) in [
                (Point::new(c.x, c.y + pl.pna_x), Point::new(1.0, 0.0)),
                (Point::new(c.x + pl.pna_y, c.y), Point::new(0.0, 1.0)),
            ] {
                if let Some((a, b)) = at.is_finite().then(|| self.clip(at, dir, grow)).flatten() {
                    self.cased_line(a, b, PLASTIC, DARK_CASING, 0.35, Some(&[3.0, 1.5]));
                    any = true;
                }
            }
            self.out.push_str("</g>\n");
            if any {
                drawn.insert(Mark::PlasticAxes);
            }
        }
        // Principal axes: 1 at theta_deg, 2 at theta_deg + 90°.
        let theta = props.theta_deg.to_radians();
        if c.is_finite() && theta.is_finite() {
            let _ = writeln!(
                self.out,
                "<g class=\"mark {}\">",
                Mark::PrincipalAxes.name()
            );
            for (k, angle) in [(1, theta), (2, theta + PI / 2.0)] {
                if let Some((a, b)) = self.clip(c, Point::polar(angle), grow) {
                    self.cased_line(a, b, PRINCIPAL, PAPER, 0.35, Some(&[8.0, 1.5, 1.0, 1.5]));
                    // The label just beyond the end the axis direction points to (right
                    // for axis 1, up for axis 2 with theta in (−90°, 90°]).
                    let at = b + Point::polar(angle) * self.u(2.5);
                    let _ = writeln!(
                        self.out,
                        "<text x=\"{}\" y=\"{}\" font-size=\"{}\" font-weight=\"bold\" text-anchor=\"middle\" dominant-baseline=\"central\" fill=\"{PRINCIPAL}\">{k}</text>",
                        self.num(at.x),
                        self.num(-at.y),
                        self.num(self.u(TEXT_MM)),
                    );
                }
            }
            self.out.push_str("</g>\n");
            drawn.insert(Mark::PrincipalAxes);
        }
        if let Some(x) = &props.extrusion {
            let (a, b) = (x.thinnest_wall_from, x.thinnest_wall_to);
            if a.is_finite() && b.is_finite() && x.thinnest_wall.is_finite() {
                let _ = writeln!(self.out, "<g class=\"mark {}\">", Mark::ThinnestWall.name());
                self.thinnest(a, b);
                self.out.push_str("</g>\n");
                drawn.insert(Mark::ThinnestWall);
            }
        }
        if let Some(t) = &props.torsion {
            if t.shear_centre.is_finite() {
                let s = t.shear_centre;
                let h = self.u(2.2);
                let _ = writeln!(
                    self.out,
                    "<g class=\"mark {}\"><path d=\"M{}L{}L{}L{}Z\" fill=\"{SHEAR_CENTRE}\" stroke=\"{CENTROID}\" stroke-width=\"{}\"/></g>",
                    Mark::ShearCentre.name(),
                    self.pt(s + Point::new(0.0, h)),
                    self.pt(s + Point::new(h, 0.0)),
                    self.pt(s + Point::new(0.0, -h)),
                    self.pt(s + Point::new(-h, 0.0)),
                    self.num(self.u(0.3)),
                );
                drawn.insert(Mark::ShearCentre);
            }
        }
    }

    /// The thinnest-wall bar from `a` to `b` with ticks across its ends.
    fn thinnest(&mut self, a: Point, b: Point) {
        let d = b - a;
        let len = d.norm();
        let n = if len > 0.0 {
            Point::new(-d.y, d.x) * (1.0 / len)
        } else {
            Point::new(0.0, 1.0)
        };
        let t = n * self.u(1.5);
        for (p, q) in [(a, b), (a - t, a + t), (b - t, b + t)] {
            self.cased_line(p, q, THINNEST, DARK_CASING, 0.7, None);
        }
    }

    /// The centroid mark at `c`: a circle, two opposite quadrants filled, and a cross.
    fn centroid(&mut self, c: Point) {
        if !c.is_finite() {
            return;
        }
        let r = self.u(2.0);
        let w = self.num(self.u(0.3));
        let (rs, cx, cy) = (self.num(r), self.num(c.x), self.num(-c.y));
        // Quadrants up-right and down-left (in drawing terms) filled.
        let q = |sx: f64, sy: f64| {
            format!(
                "M{}L{}A{rs} {rs} 0 0 {}{}Z",
                self.pt(c),
                self.pt(c + Point::new(sx * r, 0.0)),
                u8::from(sx * sy < 0.0),
                self.pt(c + Point::new(0.0, sy * r)),
            )
        };
        let _ = writeln!(
            self.out,
            "<g class=\"mark {}\"><circle cx=\"{cx}\" cy=\"{cy}\" r=\"{}\" fill=\"{PAPER}\"/><circle cx=\"{cx}\" cy=\"{cy}\" r=\"{rs}\" fill=\"{PAPER}\" stroke=\"{CENTROID}\" stroke-width=\"{w}\"/><path d=\"{}{}\" fill=\"{CENTROID}\"/><path d=\"M{}L{}M{}L{}\" stroke=\"{CENTROID}\" stroke-width=\"{w}\"/></g>",
            Mark::Centroid.name(),
            self.num(r + self.u(0.5)),
            q(1.0, 1.0),
            q(-1.0, -1.0),
            self.pt(c - Point::new(1.6 * r, 0.0)),
            self.pt(c + Point::new(1.6 * r, 0.0)),
            self.pt(c - Point::new(0.0, 1.6 * r)),
            self.pt(c + Point::new(0.0, 1.6 * r)),
        );
    }

    /// A legend sample of `mark` in the box from (x, y) (SVG coordinates, y its middle).
    fn sample(&mut self, mark: Mark, x: f64, y: f64) {
        let w = self.u(10.0);
        let (a, b) = (Point::new(x, -y), Point::new(x + w, -y));
        let mid = Point::new(x + w / 2.0, -y);
        match mark {
            Mark::Centroid => self.centroid(mid),
            Mark::PrincipalAxes => {
                self.cased_line(a, b, PRINCIPAL, PAPER, 0.35, Some(&[8.0, 1.5, 1.0, 1.5]))
            }
            Mark::PlasticAxes => {
                self.cased_line(a, b, PLASTIC, DARK_CASING, 0.35, Some(&[3.0, 1.5]))
            }
            Mark::Circumscribed => {
                let _ = writeln!(
                    self.out,
                    "<path d=\"M{}L{}\" stroke=\"{CIRCUMSCRIBED}\" stroke-width=\"{}\" stroke-dasharray=\"{} {}\" stroke-linecap=\"round\"/>",
                    self.pt(a),
                    self.pt(b),
                    self.num(self.u(0.3)),
                    self.num(self.u(0.01)),
                    self.num(self.u(0.8)),
                );
            }
            Mark::ThinnestWall => {
                let (a, b) = (
                    a + Point::new(self.u(2.0), 0.0),
                    b - Point::new(self.u(2.0), 0.0),
                );
                self.thinnest(a, b)
            }
            Mark::ShearCentre => {
                let h = self.u(2.2);
                let _ = writeln!(
                    self.out,
                    "<path d=\"M{}L{}L{}L{}Z\" fill=\"{SHEAR_CENTRE}\" stroke=\"{CENTROID}\" stroke-width=\"{}\"/>",
                    self.pt(mid + Point::new(0.0, h)),
                    self.pt(mid + Point::new(h, 0.0)),
                    self.pt(mid + Point::new(0.0, -h)),
                    self.pt(mid + Point::new(-h, 0.0)),
                    self.num(self.u(0.3)),
                );
            }
        }
    }

    /// The legend below the drawing: scale and scale bar, material and holes, then each
    /// mark drawn; then the sheet's height is filled in.
    fn legend(&mut self, drawn: &BTreeSet<Mark>) {
        let x0 = self.extent.min.x;
        let row = self.u(ROW_MM);
        let text = self.num(self.u(TEXT_MM));
        let mut y = self.legend_top;
        self.out.push_str("<g class=\"legend\">\n");
        // Scale bar: about a quarter of the drawing's width, halves black and white.
        let (bar, bar_text) = round_length(self.extent.width().max(self.u(20.0)) / 4.0);
        let h = self.u(1.5);
        let _ = writeln!(
            self.out,
            "<g class=\"scale-bar\" data-length-mm=\"{bar_text}\"><rect x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\" fill=\"{PAPER}\" stroke=\"{CENTROID}\" stroke-width=\"{}\"/><rect x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\" fill=\"{CENTROID}\"/><text x=\"{}\" y=\"{}\" font-size=\"{text}\" dominant-baseline=\"central\" fill=\"{CENTROID}\">{bar_text} mm</text></g>",
            self.num(x0),
            self.num(y - h / 2.0),
            self.num(bar),
            self.num(h),
            self.num(self.u(0.2)),
            self.num(x0),
            self.num(y - h / 2.0),
            self.num(bar / 2.0),
            self.num(h),
            self.num(x0 + bar + self.u(2.0)),
            self.num(y),
        );
        y += row;
        let _ = writeln!(
            self.out,
            "<text x=\"{}\" y=\"{}\" font-size=\"{text}\" dominant-baseline=\"central\" fill=\"{CENTROID}\">Scale {} when printed at full size; millimetres; y up</text>",
            self.num(x0),
            self.num(y),
            scale_label(self.scale)
        );
        y += row;
        // Material and hole samples.
        let (sw, sh) = (self.u(10.0), self.u(4.0));
        let _ = writeln!(
            self.out,
            "<g class=\"legend-material\"><rect x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\" fill=\"{MATERIAL}\" stroke=\"{OUTLINE}\" stroke-width=\"{}\"/><rect x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\" fill=\"{PAPER}\" stroke=\"{OUTLINE}\" stroke-width=\"{}\"/><text x=\"{}\" y=\"{}\" font-size=\"{text}\" dominant-baseline=\"central\" fill=\"{CENTROID}\">Material (filled); holes and surroundings open (white)</text></g>",
            self.num(x0),
            self.num(y - sh / 2.0),
            self.num(sw),
            self.num(sh),
            self.num(self.u(PEN_MM)),
            self.num(x0 + sw * 0.3),
            self.num(y - sh / 4.0),
            self.num(sw * 0.4),
            self.num(sh / 2.0),
            self.num(self.u(PEN_MM)),
            self.num(x0 + sw + self.u(3.0)),
            self.num(y),
        );
        y += row;
        for &mark in drawn {
            let _ = writeln!(
                self.out,
                "<g class=\"legend-entry\" data-mark=\"{}\">",
                mark.name()
            );
            self.sample(mark, x0, y);
            let _ = writeln!(
                self.out,
                "<text x=\"{}\" y=\"{}\" font-size=\"{text}\" dominant-baseline=\"central\" fill=\"{CENTROID}\">{}</text></g>",
                self.num(x0 + sw + self.u(3.0)),
                self.num(y),
                escape(mark.legend_text())
            );
            y += row;
        }
        self.out.push_str("</g>\n");
        // The sheet's height: from the top of the view to below the last legend row.
        let height = y - self.view.1;
        self.view.3 = height;
        let (vx, vy, vw, vh) = self.view;
        let size = format!(
            "width=\"{}mm\" height=\"{}mm\" viewBox=\"{} {} {} {}\"",
            self.num_paper(vw * self.scale),
            self.num_paper(vh * self.scale),
            self.num(vx),
            self.num(vy),
            self.num(vw),
            self.num(vh)
        );
        let height_text = self.num(vh);
        self.out = self
            .out
            .replacen("@SIZE@", &size, 1)
            .replacen("@HEIGHT@", &height_text, 1);
    }

    /// Paper millimetres, to a micrometre.
    fn num_paper(&self, x: f64) -> String {
        let s = format!("{:.3}", if x.is_finite() { x } else { 0.0 });
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The SVG arc from `start` with the given flags, evaluated the way SVG 1.1 Appendix
    /// F.6.5 does, returns its signed sweep in the drawing frame (y up).
    fn drawn_sweep(arc: &Arc) -> f64 {
        // Centre parametrisation in the flipped frame: with the two candidate centres on
        // the chord's bisector, the flags choose one; here the true centre is known, so we
        // check the flags against the sweep they imply in the flipped frame.
        let (large, flag) = arc_flags(arc.sweep);
        let flip = |p: Point| Point::new(p.x, -p.y);
        let (s, e, c) = (flip(arc.start), flip(arc.end), flip(arc.center));
        // Angle swept from s to e about c in the flipped frame, in the direction the sweep
        // flag says (1: angle increasing in the flipped frame).
        let a0 = (s.y - c.y).atan2(s.x - c.x);
        let a1 = (e.y - c.y).atan2(e.x - c.x);
        let mut d = a1 - a0;
        if flag == 1 {
            while d <= 0.0 {
                d += 2.0 * PI;
            }
        } else {
            while d >= 0.0 {
                d -= 2.0 * PI;
            }
        }
        // The large-arc flag must agree with the arc chosen.
        assert_eq!(large == 1, d.abs() > PI, "sweep {}", arc.sweep);
        // Back in the drawing frame the angle's sign flips.
        -d
    }

    #[test]
    fn arc_flags_follow_the_sweep_under_the_y_flip() {
        let c = Point::new(3.0, -2.0);
        for start in [0.0, 0.7, 2.0, -2.5] {
            for sweep in [PI / 2.0, -PI / 2.0, 1.5 * PI, -1.5 * PI, 0.1, -3.0] {
                let arc = Arc::from_center(c, 5.0, start, sweep);
                let got = drawn_sweep(&arc);
                assert!((got - sweep).abs() < 1e-9, "{start} {sweep}: {got}");
            }
        }
        assert_eq!(arc_flags(PI / 2.0), (0, 0));
        assert_eq!(arc_flags(-PI / 2.0), (0, 1));
        assert_eq!(arc_flags(1.5 * PI), (1, 0));
        assert_eq!(arc_flags(-1.5 * PI), (1, 1));
    }

    #[test]
    fn full_circles_are_two_half_arcs() {
        // Rounded as the sheet rounds, so −0 and 1e-16 read 0.
        let num = |x: f64| {
            let s = format!("{:.6}", x + 0.0);
            let s = s.trim_end_matches('0').trim_end_matches('.');
            if s == "-0" {
                "0".to_string()
            } else {
                s.to_string()
            }
        };
        for sweep in [2.0 * PI, -2.0 * PI] {
            let arc = Arc::from_center(Point::new(0.0, 0.0), 2.0, 0.0, sweep);
            let d = arc_path(&arc, &num);
            assert_eq!(d.matches('A').count(), 2, "{d}");
            // Half way round from (2, 0) is (−2, 0); then back to the start.
            let flag = if sweep > 0.0 { 0 } else { 1 };
            assert!(d.starts_with(&format!("A2 2 0 0 {flag} -2 ")), "{d}");
            assert!(d.ends_with(&format!("A2 2 0 0 {flag} 2 0")), "{d}");
        }
        // Degenerate radius: its chord.
        let mut arc = Arc::circle(Point::new(1.0, 1.0), 0.0);
        arc.radius = 0.0;
        assert!(arc_path(&arc, &num).starts_with('L'));
    }

    #[test]
    fn scales_and_scale_bars_are_round() {
        assert_eq!(fitting_scale(100.0, 50.0, 150.0, 160.0), 1.0);
        assert_eq!(fitting_scale(40.0, 30.0, 150.0, 160.0), 2.0);
        assert_eq!(fitting_scale(1000.0, 50.0, 150.0, 160.0), 0.1);
        assert_eq!(fitting_scale(0.0, 0.0, 150.0, 160.0), 1.0);
        assert_eq!(fitting_scale(f64::NAN, 1.0, 150.0, 160.0), 1.0);
        assert_eq!(scale_label(0.2), "1:5");
        assert_eq!(scale_label(2.0), "2:1");
        assert_eq!(round_length(37.0), (20.0, "20".into()));
        assert_eq!(round_length(0.37).1, "0.2");
        assert_eq!(round_length(5.0).1, "5");
        assert_eq!(round_length(f64::NAN).1, "1");
    }
}

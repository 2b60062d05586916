//! SVG drawings of profiles (`report::drawing`, `sectio draw`): rendered to pixels with
//! resvg, then checked where the material, the holes and the centroid mark are.

mod util;

use std::path::Path;
use std::process::Command;

use resvg::tiny_skia::{Pixmap, Transform};
use resvg::usvg;
use sectio::analyze::{measure_drawing_with_geometry, Settings};
use sectio::geom::{Point, Profile};
use sectio::report::drawing::{profile_svg, DrawStyle};
use sectio::section::SectionProps;
use util::{circle, closed, drawing, poly, rect};

const BIN: &str = env!("CARGO_BIN_EXE_sectio");
/// Rendered width in pixels.
const WIDTH_PX: u32 = 900;
/// Material fill #5b6e82 and paper #ffffff (the module's visual language).
const MATERIAL: [u8; 3] = [0x5b, 0x6e, 0x82];
const PAPER: [u8; 3] = [0xff, 0xff, 0xff];

/// A rendered sheet and the map from drawing coordinates to pixels.
struct Rendered {
    pixmap: Pixmap,
    /// viewBox x, y and pixels per drawing unit.
    vx: f64,
    vy: f64,
    px_per_unit: f64,
}

impl Rendered {
    /// The pixel holding drawing point `p` (y up; the sheet writes (x, −y)).
    fn pixel_of(&self, p: Point) -> (f64, f64) {
        (
            (p.x - self.vx) * self.px_per_unit,
            (-p.y - self.vy) * self.px_per_unit,
        )
    }
    fn rgb(&self, p: Point) -> [u8; 3] {
        let (x, y) = self.pixel_of(p);
        let c = self
            .pixmap
            .pixel(x.floor() as u32, y.floor() as u32)
            .expect("point on the sheet");
        assert_eq!(c.alpha(), 255, "the paper is opaque");
        [c.red(), c.green(), c.blue()]
    }
    /// The mean pixel position of the (nearly) black pixels within `radius_px` of `p`'s
    /// pixel: the centroid mark's black quadrants, ring and cross are point symmetric
    /// about its centre.
    fn black_centre_near(&self, p: Point, radius_px: f64) -> (f64, f64) {
        let (cx, cy) = self.pixel_of(p);
        let (mut sx, mut sy, mut n) = (0.0, 0.0, 0.0);
        let r = radius_px.ceil() as i64;
        for dy in -r..=r {
            for dx in -r..=r {
                let (x, y) = (cx.floor() as i64 + dx, cy.floor() as i64 + dy);
                if x < 0 || y < 0 {
                    continue;
                }
                if let Some(c) = self.pixmap.pixel(x as u32, y as u32) {
                    if c.red().max(c.green()).max(c.blue()) < 16 {
                        sx += x as f64 + 0.5;
                        sy += y as f64 + 0.5;
                        n += 1.0;
                    }
                }
            }
        }
        assert!(n > 20.0, "no centroid mark near {p:?}");
        (sx / n, sy / n)
    }
}

fn render(svg: &str) -> Rendered {
    let tree = usvg::Tree::from_str(svg, &usvg::Options::default()).expect("the SVG parses");
    let size = tree.size();
    let k = WIDTH_PX as f32 / size.width();
    let height = (size.height() * k).ceil() as u32;
    let mut pixmap = Pixmap::new(WIDTH_PX, height).expect("a non-empty pixmap");
    resvg::render(&tree, Transform::from_scale(k, k), &mut pixmap.as_mut());
    let doc = roxmltree::Document::parse(svg).expect("well-formed XML");
    let view: Vec<f64> = doc
        .root_element()
        .attribute("viewBox")
        .expect("a viewBox")
        .split_whitespace()
        .map(|t| t.parse().expect("a number"))
        .collect();
    // Drawn to scale: width and height in mm are the viewBox times one scale.
    let mm = |name: &str| -> f64 {
        let t = doc.root_element().attribute(name).expect("size");
        t.strip_suffix("mm")
            .expect("in mm")
            .parse()
            .expect("number")
    };
    let (sx, sy) = (mm("width") / view[2], mm("height") / view[3]);
    assert!((sx - sy).abs() < 1e-4 * sx, "one scale: {sx} vs {sy}");
    Rendered {
        pixmap,
        vx: view[0],
        vy: view[1],
        px_per_unit: WIDTH_PX as f64 / view[2],
    }
}

fn close_to(got: [u8; 3], want: [u8; 3]) -> bool {
    got.iter().zip(want).all(|(g, w)| g.abs_diff(w) <= 2)
}

/// The distance from `q` to the nearer principal axis of `props`.
fn from_axes(props: &SectionProps, q: Point) -> f64 {
    let t = props.theta_deg.to_radians();
    let d = q - props.centroid;
    let along1 = Point::polar(t);
    d.cross(along1).abs().min(d.dot(along1).abs())
}

/// Checks every sheet gets: material at `material`, paper at `paper` (holes and outside),
/// and the centroid mark centred on the centroid within 1.5 pixels.
fn check_pixels(svg: &str, props: &SectionProps, material: &[Point], paper: &[Point]) {
    let r = render(svg);
    for &q in material {
        assert!(from_axes(props, q) > 3.0, "{q:?} is on an axis");
        assert!(close_to(r.rgb(q), MATERIAL), "{q:?}: {:?}", r.rgb(q));
    }
    for &q in paper {
        assert!(from_axes(props, q) > 3.0, "{q:?} is on an axis");
        assert!(close_to(r.rgb(q), PAPER), "{q:?}: {:?}", r.rgb(q));
    }
    let (want_x, want_y) = r.pixel_of(props.centroid);
    // The mark's radius is 2 paper mm, its cross 3.2 mm: look within 4 mm.
    let scale = scale_of(svg);
    let (got_x, got_y) = r.black_centre_near(props.centroid, 4.0 / scale * r.px_per_unit);
    assert!(
        (got_x - want_x).hypot(got_y - want_y) < 1.5,
        "mark at ({got_x}, {got_y}) px, centroid at ({want_x}, {want_y}) px"
    );
}

/// Paper millimetres per drawing unit.
fn scale_of(svg: &str) -> f64 {
    let doc = roxmltree::Document::parse(svg).expect("XML");
    let root = doc.root_element();
    let w: f64 = root
        .attribute("width")
        .and_then(|t| t.strip_suffix("mm"))
        .and_then(|t| t.parse().ok())
        .expect("width in mm");
    let view_w: f64 = root
        .attribute("viewBox")
        .and_then(|v| v.split_whitespace().nth(2))
        .and_then(|t| t.parse().ok())
        .expect("viewBox");
    w / view_w
}

/// The marks drawn (`<g class="mark NAME">`) and the legend's entries (`data-mark`).
fn marks_and_legend(svg: &str) -> (Vec<String>, Vec<String>) {
    let doc = roxmltree::Document::parse(svg).expect("XML");
    let mut marks: Vec<String> = doc
        .descendants()
        .filter_map(|n| n.attribute("class"))
        .filter_map(|c| c.strip_prefix("mark "))
        .map(String::from)
        .collect();
    marks.sort();
    marks.dedup();
    let mut legend: Vec<String> = doc
        .descendants()
        .filter_map(|n| n.attribute("data-mark"))
        .map(String::from)
        .collect();
    legend.sort();
    (marks, legend)
}

/// The material paths' data.
fn material_paths(svg: &str) -> Vec<String> {
    let doc = roxmltree::Document::parse(svg).expect("XML");
    doc.descendants()
        .filter(|n| n.attribute("class") == Some("material"))
        .map(|n| {
            assert_eq!(n.attribute("fill-rule"), Some("evenodd"));
            n.attribute("d").expect("path data").to_string()
        })
        .collect()
}

/// The scale bar's length is 1, 2 or 5 × 10ⁿ mm, and its label says so.
fn check_scale_bar(svg: &str) {
    let doc = roxmltree::Document::parse(svg).expect("XML");
    let bar = doc
        .descendants()
        .find(|n| n.attribute("class") == Some("scale-bar"))
        .expect("a scale bar");
    let text = bar.attribute("data-length-mm").expect("its length");
    let v: f64 = text.parse().expect("a number");
    let mantissa = v / 10f64.powf(v.log10().floor());
    assert!(
        [1.0, 2.0, 5.0].iter().any(|m| (mantissa - m).abs() < 1e-9),
        "{text}"
    );
    let label = bar
        .descendants()
        .find(|n| n.has_tag_name("text"))
        .and_then(|n| n.text())
        .expect("a label");
    assert_eq!(label, format!("{text} mm"));
    // The bar's drawn length is that many drawing millimetres.
    let width: f64 = bar
        .descendants()
        .find(|n| n.has_tag_name("rect"))
        .and_then(|n| n.attribute("width"))
        .and_then(|t| t.parse().ok())
        .expect("bar width");
    assert!((width - v).abs() < 1e-6 * v);
}

/// The demo drawings keep their profiles on layer PROFILE (fixtures/demo/README.md).
fn profile_layer() -> Settings {
    let mut s = Settings::default();
    s.read.layers = vec!["PROFILE".into()];
    s
}

/// Measure hand-built pieces and keep the geometry.
fn measured(
    pieces: Vec<sectio::import::Piece>,
    settings: &Settings,
) -> (Vec<Profile>, SectionProps, sectio::geom::CurveTable) {
    let m = measure_drawing_with_geometry(drawing(pieces), settings);
    assert_eq!(m.outcomes.len(), 1, "{:?}", m.outcomes);
    let props = m.outcomes[0].result.clone().expect("measured");
    let profiles = m.profiles.into_iter().next().expect("one row");
    (profiles, props, m.curves)
}

#[test]
fn rectangle_with_a_round_hole_renders_material_hole_and_centroid() {
    // 100 × 60 with a hole of radius 15 at (30, 30): the centroid lies right of the middle,
    // x̄ = (6000·50 − 225π·30)/(6000 − 225π) (composite areas, from memory).
    let (profiles, props, curves) = measured(
        vec![
            closed(rect(0.0, 0.0, 100.0, 60.0)),
            closed(circle(30.0, 30.0, 15.0)),
        ],
        &Settings::default(),
    );
    let a_hole = 225.0 * std::f64::consts::PI;
    let want_x = (6000.0 * 50.0 - a_hole * 30.0) / (6000.0 - a_hole);
    assert!((props.centroid.x - want_x).abs() < 1e-9);
    let refs: Vec<&Profile> = profiles.iter().collect();
    let svg = profile_svg(&refs, &curves, &props, &DrawStyle::default());
    let paths = material_paths(&svg);
    assert_eq!(paths.len(), 1);
    // The hole is two half arcs, not a polygon.
    assert_eq!(paths[0].matches('A').count(), 2, "{}", paths[0]);
    check_pixels(
        &svg,
        &props,
        &[
            Point::new(10.0, 10.0),
            Point::new(90.0, 50.0),
            Point::new(75.0, 12.0),
        ],
        &[
            Point::new(30.0, 38.0),
            Point::new(24.0, 22.0),
            Point::new(-4.0, -4.0),
            Point::new(104.0, 64.0),
        ],
    );
    check_scale_bar(&svg);
    let (marks, legend) = marks_and_legend(&svg);
    assert_eq!(marks, ["centroid", "principal-axes"]);
    assert_eq!(legend, marks);
}

#[test]
fn l_section_with_a_fillet_renders_with_arcs_and_every_mark() {
    // Unequal legs 50 × 80, 8 thick, an inner fillet of radius 6 (a concave corner of a
    // counter-clockwise outline: bulge −tan(90°/4)).
    let f = -(std::f64::consts::PI / 8.0).tan();
    let outline = poly(
        &[
            (0.0, 0.0),
            (50.0, 0.0),
            (50.0, 8.0),
            (14.0, 8.0),
            (8.0, 14.0),
            (8.0, 80.0),
            (0.0, 80.0),
        ],
        &[0.0, 0.0, 0.0, f, 0.0, 0.0, 0.0],
    );
    let settings = Settings {
        plastic: true,
        extrusion: true,
        ..Settings::default()
    };
    let (profiles, props, curves) = measured(vec![closed(outline)], &settings);
    assert!(
        props.theta_deg.abs() > 1.0,
        "unsymmetric: {}",
        props.theta_deg
    );
    let refs: Vec<&Profile> = profiles.iter().collect();
    let svg = profile_svg(&refs, &curves, &props, &DrawStyle::default());
    let paths = material_paths(&svg);
    assert_eq!(paths[0].matches('A').count(), 1, "{}", paths[0]);
    // Concave fillet, clockwise in the drawing: counter-clockwise after the flip, so the
    // sweep flag is 1; a quarter turn is not a large arc.
    assert!(paths[0].contains("A6 6 0 0 1 8 -14"), "{}", paths[0]);
    check_pixels(
        &svg,
        &props,
        &[Point::new(4.0, 70.0), Point::new(45.0, 4.0)],
        &[Point::new(40.0, 60.0), Point::new(30.0, 40.0)],
    );
    check_scale_bar(&svg);
    let (marks, legend) = marks_and_legend(&svg);
    assert_eq!(
        marks,
        [
            "centroid",
            "circumscribed-circle",
            "plastic-axes",
            "principal-axes",
            "thinnest-wall"
        ]
    );
    assert_eq!(legend, marks);
}

#[test]
fn draw_command_writes_the_tube_of_the_demo() {
    let dir = tempfile::tempdir().expect("temp dir");
    let out = dir.path().join("tube.svg");
    let file = Path::new(env!("CARGO_MANIFEST_DIR")).join("fixtures/demo/02_hv-152_tube-50x3.dxf");
    let run = Command::new(BIN)
        .args(["draw", "--all", "--layer", "PROFILE"])
        .arg(&file)
        .arg("-o")
        .arg(&out)
        .output()
        .expect("the binary runs");
    assert_eq!(
        run.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&run.stderr)
    );
    let svg = std::fs::read_to_string(&out).expect("the sheet was written");
    // The same profile through the library.
    let bytes = std::fs::read(&file).expect("fixture");
    let rows = sectio::analyze_drawing(&bytes, &profile_layer());
    assert_eq!(rows.len(), 1);
    let props = rows[0].result.clone().expect("measured");
    let c = props.centroid;
    let paths = material_paths(&svg);
    assert_eq!(paths.len(), 1);
    // Two circles, each two half arcs; no line.
    assert_eq!(paths[0].matches('A').count(), 4, "{}", paths[0]);
    assert!(!paths[0].contains('L'), "{}", paths[0]);
    let at = |dx: f64, dy: f64| Point::new(c.x + dx, c.y + dy);
    let d = 23.5 / 2f64.sqrt();
    check_pixels(
        &svg,
        &props,
        &[at(d, d), at(-d, d), at(-d, -d)],
        &[at(8.0, 8.0), at(-10.0, 6.0), at(27.0, 27.0)],
    );
    check_scale_bar(&svg);
    let (marks, legend) = marks_and_legend(&svg);
    assert_eq!(
        marks,
        [
            "centroid",
            "circumscribed-circle",
            "plastic-axes",
            "principal-axes",
            "shear-centre",
            "thinnest-wall"
        ]
    );
    assert_eq!(legend, marks);
    // Without -o, the sheet goes to standard output, the same text.
    let run = Command::new(BIN)
        .args(["draw", "--all", "--layer", "PROFILE"])
        .arg(&file)
        .output()
        .expect("the binary runs");
    assert_eq!(run.status.code(), Some(0));
    assert_eq!(String::from_utf8_lossy(&run.stdout), svg);
}

#[test]
fn draw_command_exit_statuses() {
    let dir = tempfile::tempdir().expect("temp dir");
    // A drawing with no closed outline: nothing written, status 1.
    let open = dir.path().join("open.dxf");
    std::fs::write(
        &open,
        "0\nSECTION\n2\nENTITIES\n0\nLINE\n8\n0\n10\n0\n20\n0\n11\n10\n21\n0\n0\nENDSEC\n0\nEOF\n",
    )
    .expect("write");
    let out = dir.path().join("open.svg");
    let run = Command::new(BIN)
        .arg("draw")
        .arg(&open)
        .arg("-o")
        .arg(&out)
        .output()
        .expect("runs");
    assert_eq!(run.status.code(), Some(1));
    assert!(!out.exists());
    // A missing file and a bad scale are usage errors.
    let run = Command::new(BIN)
        .arg("draw")
        .arg(dir.path().join("missing.dxf"))
        .output()
        .expect("runs");
    assert_eq!(run.status.code(), Some(2));
    let run = Command::new(BIN)
        .args(["draw", "--scale", "1:0"])
        .arg(&open)
        .output()
        .expect("runs");
    assert_eq!(run.status.code(), Some(2));
    // Several profiles on one sheet, each labelled with its number.
    let demo = Path::new(env!("CARGO_MANIFEST_DIR")).join("fixtures/demo/07_hv-901_bar-sheet.dxf");
    let run = Command::new(BIN)
        .args(["draw", "--layer", "PROFILE"])
        .arg(&demo)
        .output()
        .expect("runs");
    let svg = String::from_utf8_lossy(&run.stdout).to_string();
    let rows = sectio::analyze_drawing(&std::fs::read(&demo).expect("fixture"), &profile_layer());
    let ok = rows.iter().filter(|r| r.result.is_ok()).count();
    assert_eq!(
        run.status.code(),
        Some(if ok == rows.len() { 0 } else { 1 })
    );
    assert_eq!(material_paths(&svg).len(), ok);
    let doc = roxmltree::Document::parse(&svg).expect("XML");
    let labels: Vec<&str> = doc
        .descendants()
        .filter(|n| n.attribute("class") == Some("label"))
        .filter_map(|n| n.text())
        .collect();
    let want: Vec<String> = rows
        .iter()
        .filter(|r| r.result.is_ok())
        .map(|r| r.profile.to_string())
        .collect();
    assert_eq!(labels, want);
}

/// `analyze_drawing_with_geometry` gives the rows `analyze_drawing` gives, numbered alike,
/// with one profile per measured row (all of them with `--merge`) and none for problem rows.
#[test]
fn geometry_comes_with_the_same_rows() {
    let demo = Path::new(env!("CARGO_MANIFEST_DIR")).join("fixtures/demo");
    let mut files: Vec<_> = std::fs::read_dir(&demo)
        .expect("demo folder")
        .map(|e| e.expect("entry").path())
        .filter(|p| p.extension().is_some_and(|e| e == "dxf"))
        .collect();
    files.sort();
    assert_eq!(files.len(), 8);
    for file in &files {
        let bytes = std::fs::read(file).expect("fixture");
        // Every layer too: the title frames make rows with holes on other layers.
        for mut settings in [profile_layer(), Settings::default()] {
            for merge in [false, true] {
                settings.merge = merge;
                let rows = sectio::analyze_drawing(&bytes, &settings);
                let with = sectio::analyze_drawing_with_geometry(&bytes, &settings);
                assert_eq!(rows, with.outcomes, "{}", file.display());
                assert_eq!(with.profiles.len(), rows.len());
                let n_profiles: usize = with.profiles.iter().map(Vec::len).sum();
                for (row, profiles) in rows.iter().zip(&with.profiles) {
                    if let Ok(props) = &row.result {
                        if !merge {
                            assert_eq!(profiles.len(), 1, "{}", file.display());
                        } else {
                            assert_eq!(profiles.len(), n_profiles);
                        }
                        let holes: usize = profiles.iter().map(|p| p.holes.len()).sum();
                        assert_eq!(holes, props.n_holes, "{}", file.display());
                    }
                }
            }
        }
    }
}

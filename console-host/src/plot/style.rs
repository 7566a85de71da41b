//! What every picture shares: the embedded font, the colours and sizes, the output file
//! (PNG or SVG, chosen by the extension of `--out`), and [`Frame`], the mapping from a
//! plot's data coordinates to pixels that the tests use to find what was drawn.

use crate::error::{CliError, CliResult};
use plotters::coord::cartesian::Cartesian2d;
use plotters::coord::types::RangedCoordf64;
use plotters::coord::Shift;
use plotters::prelude::*;
use std::path::Path;

/// DejaVu Sans cut down to the characters the plots use (console-host/assets/fonts:
/// README and licence). Compiled in, so no system font or fontconfig is needed.
const FONT: &[u8] = include_bytes!("../../assets/fonts/DejaVuSans-subset.ttf");

/// The font family every text of a plot is drawn in.
pub const FAMILY: &str = "sans-serif";

/// Default picture width, pixels.
pub const WIDTH_DEFAULT_PX: u32 = 1000;
/// Default picture height, pixels.
pub const HEIGHT_DEFAULT_PX: u32 = 700;
/// Smallest picture side accepted, pixels (below it the labels do not fit).
pub const SIZE_MIN_PX: u32 = 300;
/// Largest picture side accepted, pixels.
pub const SIZE_MAX_PX: u32 = 8000;

/// The background of every picture.
pub const BACKGROUND: RGBColor = WHITE;
/// Text and axes.
pub const INK: RGBColor = RGBColor(20, 20, 20);
/// Faint grid lines.
pub const GRID: RGBColor = RGBColor(225, 225, 225);
/// A beam's spot or track.
pub const BEAM: RGBColor = RGBColor(0, 90, 200);
/// A beam hidden by the gun, and the gun's shadow.
pub const HIDDEN: RGBColor = RGBColor(150, 150, 150);
/// The arm's reachable region.
pub const REACH: RGBColor = RGBColor(60, 170, 90);
/// Forbidden zones and beyond the soft limits.
pub const FORBIDDEN: RGBColor = RGBColor(220, 60, 50);
/// Predicted positions (I-V maxima, peaks) and emergence energies.
pub const PREDICTED: RGBColor = RGBColor(200, 110, 0);

/// A palette for curves told apart by colour (tracks of different beams).
pub const CURVES: [RGBColor; 8] = [
    RGBColor(0, 90, 200),
    RGBColor(200, 110, 0),
    RGBColor(0, 150, 120),
    RGBColor(150, 60, 170),
    RGBColor(120, 90, 40),
    RGBColor(210, 60, 140),
    RGBColor(90, 90, 90),
    RGBColor(60, 160, 210),
];

/// A text style of `size_px` in the embedded font.
pub fn text(size_px: u32) -> TextStyle<'static> {
    (FAMILY, size_px).into_font().color(&INK)
}

/// An axis label: a whole number when the value is one (−20, 40), else as it comes.
pub fn whole(v: &f64) -> String {
    if (v - v.round()).abs() < 1e-9 {
        format!("{}", v.round())
    } else {
        format!("{v}")
    }
}

/// The kind of file a picture is written as.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum FileKind {
    /// PNG, 8-bit RGB.
    Png,
    /// SVG 1.1 text.
    Svg,
}

impl FileKind {
    /// The kind named by the extension of `path` (`.png` or `.svg`, any case); an error
    /// naming `option` otherwise.
    pub fn of(path: &Path, option: &str) -> CliResult<FileKind> {
        let ext = path
            .extension()
            .and_then(|e| e.to_str())
            .map(str::to_ascii_lowercase);
        match ext.as_deref() {
            Some("png") => Ok(FileKind::Png),
            Some("svg") => Ok(FileKind::Svg),
            _ => Err(CliError::new(format!(
                "{option} {}: give a file name ending in .png or .svg (the picture's format)",
                path.display()
            ))),
        }
    }

    /// The word for the kind (`png`, `svg`).
    pub fn word(self) -> &'static str {
        match self {
            FileKind::Png => "png",
            FileKind::Svg => "svg",
        }
    }
}

/// Where a picture goes: the file, its kind and its size.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Target {
    /// The file written.
    pub path: std::path::PathBuf,
    /// Its format.
    pub kind: FileKind,
    /// Width, pixels.
    pub width_px: u32,
    /// Height, pixels.
    pub height_px: u32,
}

impl Target {
    /// A target with its kind from the extension of `path`, each size within
    /// [`SIZE_MIN_PX`]..=[`SIZE_MAX_PX`]; errors name `--out`, `--width`, `--height`.
    pub fn new(path: &Path, width_px: u32, height_px: u32) -> CliResult<Target> {
        let kind = FileKind::of(path, "--out")?;
        for (name, v) in [("--width", width_px), ("--height", height_px)] {
            if !(SIZE_MIN_PX..=SIZE_MAX_PX).contains(&v) {
                return Err(CliError::new(format!(
                    "{name} {v}: give {SIZE_MIN_PX} to {SIZE_MAX_PX} pixels"
                )));
            }
        }
        Ok(Target {
            path: path.to_path_buf(),
            kind,
            width_px,
            height_px,
        })
    }
}

/// A picture that can be drawn on any plotters backend.
pub trait Picture {
    /// What drawing it tells its caller (e.g. the [`Frame`] of its plot).
    type Drawn;
    /// Draws the whole picture on `root` (already cleared to [`BACKGROUND`]).
    fn draw<DB: DrawingBackend>(
        &self,
        root: &DrawingArea<DB, Shift>,
    ) -> Result<Self::Drawn, String>;
}

fn register_font() -> CliResult<()> {
    static DONE: std::sync::OnceLock<bool> = std::sync::OnceLock::new();
    let ok = *DONE
        .get_or_init(|| plotters::style::register_font(FAMILY, FontStyle::Normal, FONT).is_ok());
    if ok {
        Ok(())
    } else {
        Err(CliError::new(
            "the embedded plot font could not be read (a broken build)",
        ))
    }
}

/// Draws `pic` into the file of `t`: PNG through the bitmap backend and the `png`
/// encoder, SVG through the SVG backend; the file is written only when drawing
/// succeeded. Errors name `--out` and the file.
pub fn render<P: Picture>(pic: &P, t: &Target) -> CliResult<P::Drawn> {
    register_font()?;
    let size = (t.width_px, t.height_px);
    let fail =
        |what: &str, e: String| CliError::new(format!("--out {}: {what}: {e}", t.path.display()));
    let (bytes, drawn) = match t.kind {
        FileKind::Png => {
            let mut rgb = vec![0u8; t.width_px as usize * t.height_px as usize * 3];
            let drawn = {
                let root = BitMapBackend::with_buffer(&mut rgb, size).into_drawing_area();
                root.fill(&BACKGROUND)
                    .map_err(|e| fail("drawing", e.to_string()))?;
                let d = pic.draw(&root).map_err(|e| fail("drawing", e))?;
                root.present().map_err(|e| fail("drawing", e.to_string()))?;
                d
            };
            (
                encode_png(&rgb, size).map_err(|e| fail("encoding", e))?,
                drawn,
            )
        }
        FileKind::Svg => {
            let mut svg = String::new();
            let drawn = {
                let root = SVGBackend::with_string(&mut svg, size).into_drawing_area();
                root.fill(&BACKGROUND)
                    .map_err(|e| fail("drawing", e.to_string()))?;
                let d = pic.draw(&root).map_err(|e| fail("drawing", e))?;
                root.present().map_err(|e| fail("drawing", e.to_string()))?;
                d
            };
            (svg.into_bytes(), drawn)
        }
    };
    std::fs::write(&t.path, bytes).map_err(|e| fail("cannot write it", e.to_string()))?;
    Ok(drawn)
}

/// An 8-bit RGB buffer as PNG bytes.
fn encode_png(rgb: &[u8], (w, h): (u32, u32)) -> Result<Vec<u8>, String> {
    let mut out = Vec::new();
    {
        let mut enc = png::Encoder::new(&mut out, w, h);
        enc.set_color(png::ColorType::Rgb);
        enc.set_depth(png::BitDepth::Eight);
        enc.set_compression(png::Compression::High);
        let mut wr = enc.write_header().map_err(|e| e.to_string())?;
        wr.write_image_data(rgb).map_err(|e| e.to_string())?;
        wr.finish().map_err(|e| e.to_string())?;
    }
    Ok(out)
}

/// A plot's mapping from data coordinates to pixels: the data ranges on each axis and
/// the pixel rectangle of the plotting area they fill (x to the right, y up).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Frame {
    /// Data x at the left and right edges of the plotting area.
    pub x: (f64, f64),
    /// Data y at the bottom and top edges of the plotting area.
    pub y: (f64, f64),
    /// Pixel columns of the left and right edges.
    pub px_x: (i32, i32),
    /// Pixel rows of the top and bottom edges.
    pub px_y: (i32, i32),
}

impl Frame {
    /// The frame of a chart's plotting area, for the ranges it was built with: the
    /// pixels plotters maps the corners (x.0, y.0) and (x.1, y.1) to.
    pub fn of<DB: DrawingBackend>(
        area: &DrawingArea<DB, Cartesian2d<RangedCoordf64, RangedCoordf64>>,
        x: (f64, f64),
        y: (f64, f64),
    ) -> Frame {
        let (c0, r0) = area.map_coordinate(&(x.0, y.0));
        let (c1, r1) = area.map_coordinate(&(x.1, y.1));
        Frame {
            x,
            y,
            px_x: (c0, c1),
            px_y: (r1, r0),
        }
    }

    /// The pixel (column, row) of the data point (`x`, `y`), as plotters maps it.
    pub fn to_px(&self, x: f64, y: f64) -> (i32, i32) {
        let fx = (x - self.x.0) / (self.x.1 - self.x.0);
        let fy = (y - self.y.0) / (self.y.1 - self.y.0);
        let c = self.px_x.0 as f64 + fx * (self.px_x.1 - self.px_x.0) as f64;
        let r = self.px_y.1 as f64 - fy * (self.px_y.1 - self.px_y.0) as f64;
        (c.round() as i32, r.round() as i32)
    }

    /// The data distance covered by one pixel along x.
    pub fn x_per_px(&self) -> f64 {
        (self.x.1 - self.x.0) / f64::from((self.px_x.1 - self.px_x.0).max(1))
    }
}

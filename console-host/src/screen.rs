//! `mwctl calc screen`: where every beam lands on a hemispherical screen or a flat
//! detector, which the gun's shadow hides, and which beam is at a measured spot — all
//! computed by the core (`goniometer::Screen`).

use crate::calc::{check_angle, check_max, face_fields, face_of, truncated_field, GunArgs};
use crate::error::{CliError, CliResult, Context};
use crate::output::{col, List, Report, Value};
use matterwave_core::goniometer::{Screen, Spot, GUN_SHADOW_MAX_DEG};
use matterwave_core::surface::Incidence;

/// The options of `mwctl calc screen`.
#[derive(Clone, Debug, clap::Args)]
pub struct ScreenArgs {
    /// Crystal id.
    #[arg(long, value_name = "ID")]
    pub crystal: String,
    /// Sample temperature.
    #[command(flatten)]
    pub sample: crate::calc::SampleArgs,
    /// Face (as for `beams`).
    #[arg(long, value_name = "HKL", allow_hyphen_values = true)]
    pub face: String,
    /// Gun settings.
    #[command(flatten)]
    pub gun: GunArgs,
    /// Sample tilt α, degrees, within ±89.9 (0: normal incidence).
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "DEG", default_value_t = 0.0)]
    pub tilt: f32,
    /// Sample azimuth φ, degrees, within ±360 (0: a1 along e1, in the scattering plane).
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "DEG", default_value_t = 0.0)]
    pub azimuth: f32,
    /// A hemispherical screen of this radius, mm (above 0, at most 100000), centred on
    /// the sample and coaxial with the gun.
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "MM",
          required_unless_present = "distance", conflicts_with = "distance")]
    pub radius: Option<f32>,
    /// The hemispherical screen's rim: its polar angle from the screen axis, degrees
    /// (above 0, at most 90; 90 = the whole hemisphere).
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "DEG", default_value_t = 90.0,
          conflicts_with = "distance")]
    pub rim: f32,
    /// A flat detector whose plane is this far from the sample along its normal, mm.
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "MM",
          requires_all = ["half_width", "half_height"])]
    pub distance: Option<f32>,
    /// Arm angle of the flat detector's normal, degrees (docs/CONVENTIONS.md).
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "DEG", default_value_t = 0.0,
          requires = "distance")]
    pub detector_arm: f32,
    /// Elevation of the flat detector's normal, degrees (−90 to 90).
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "DEG", default_value_t = 0.0,
          requires = "distance")]
    pub detector_elevation: f32,
    /// Half-width of the flat detector along x (increasing arm angle), mm.
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "MM", requires = "distance")]
    pub half_width: Option<f32>,
    /// Half-height of the flat detector along y (increasing elevation), mm.
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "MM", requires = "distance")]
    pub half_height: Option<f32>,
    /// Half-angle of the gun's shadow about the direction back at the gun, degrees
    /// (0 to 45; 0 = no shadow).
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "DEG", default_value_t = 0.0)]
    pub gun_shadow: f32,
    /// A spot measured on the screen at X,Y mm: name the beam nearest it.
    #[arg(long, value_name = "X,Y", allow_hyphen_values = true)]
    pub spot: Option<String>,
    /// With --spot: how far (in angle, degrees, 0 to 90) the nearest beam may be.
    #[arg(value_parser = crate::number::f32_arg, long, value_name = "DEG", default_value_t = 2.0,
          requires = "spot")]
    pub tolerance: f32,
    /// Most spots to list (smallest |g| first), 1 to 10000.
    #[arg(value_parser = crate::number::max_arg, long, value_name = "N", default_value_t = 500)]
    pub max: usize,
}

impl ScreenArgs {
    /// The core's screen, and the options that set it (for error messages).
    fn screen(&self) -> (Screen, String) {
        match (self.radius, self.distance) {
            (_, Some(distance_mm)) => {
                let (w, h) = (
                    self.half_width.unwrap_or(f32::NAN),
                    self.half_height.unwrap_or(f32::NAN),
                );
                (
                    Screen::Flat {
                        distance_mm,
                        arm_deg: self.detector_arm,
                        elevation_deg: self.detector_elevation,
                        half_width_mm: w,
                        half_height_mm: h,
                    },
                    format!(
                        "--distance {distance_mm} --half-width {w} --half-height {h} --detector-arm {} --detector-elevation {} (accepted: lengths above 0 and at most 100000 mm, elevation -90 to 90 deg)",
                        self.detector_arm, self.detector_elevation
                    ),
                )
            }
            (r, None) => {
                let radius_mm = r.unwrap_or(f32::NAN);
                (
                    Screen::Hemisphere {
                        radius_mm,
                        rim_deg: self.rim,
                    },
                    format!(
                        "--radius {radius_mm} --rim {} (accepted: radius above 0 and at most 100000 mm, rim above 0 and at most 90 deg)",
                        self.rim
                    ),
                )
            }
        }
    }
}

/// Reads `X,Y` (mm).
fn parse_spot(text: &str) -> CliResult<(f32, f32)> {
    let bad = || {
        CliError::new(format!(
            "--spot '{text}': give two numbers X,Y in mm, e.g. 12.5,-3"
        ))
    };
    let (x, y) = text.split_once(',').ok_or_else(bad)?;
    let x = crate::number::f32_arg(x.trim()).map_err(|_| bad())?;
    let y = crate::number::f32_arg(y.trim()).map_err(|_| bad())?;
    Ok((x, y))
}

/// `mwctl calc screen`.
pub fn screen(a: &ScreenArgs) -> CliResult<Report> {
    let c = &crate::calc::crystal_at(&a.crystal, &a.sample)?;
    let (_, face) = face_of(c, &a.face)?;
    let g = &a.gun.at_face(c, &face)?;
    let e = g.kinetic_ev()?;
    let tilt = check_angle(a.tilt, "tilt", matterwave_core::surface::TILT_MAX_DEG)?;
    let azimuth = check_angle(a.azimuth, "azimuth", 360.0)?;
    let inc = Incidence::new(e, tilt, azimuth).ctx("incidence")?;
    let (scr, options) = a.screen();
    scr.validate().ctx(&options)?;
    let shadow = matterwave_core::goniometer::check_gun_shadow(a.gun_shadow).ctx(format_args!(
        "--gun-shadow {} (accepted 0 to {GUN_SHADOW_MAX_DEG} deg)",
        a.gun_shadow
    ))?;
    let mut buf = vec![Spot::EMPTY; check_max(a.max)?];
    let l = scr
        .list_spots(&face, &inc, shadow, &mut buf)
        .ctx("spot listing")?;
    let spots = &buf[..l.stored];

    let mut r = Report::default();
    face_fields(&mut r, c, &face);
    g.fields(&mut r, e);
    crate::calc::incidence_fields(&mut r, &inc);
    screen_fields(&mut r, &scr);
    r.field("gun_shadow_deg", "gun shadow (deg)", Value::F32(shadow, 2));
    if let Some(text) = &a.spot {
        let (x, y) = parse_spot(text)?;
        let near = scr
            .nearest_beam(&face, &inc, x, y, a.tolerance)
            .ctx(format_args!(
            "--spot {text} --tolerance {} (the spot must lie on the screen; tolerance 0 to 90 deg)",
            a.tolerance
        ))?;
        r.field("spot_x_mm", "spot x (mm)", Value::F32(x, 2));
        r.field("spot_y_mm", "spot y (mm)", Value::F32(y, 2));
        r.field(
            "tolerance_deg",
            "tolerance (deg)",
            Value::F32(a.tolerance, 2),
        );
        let at = near.and_then(|v| scr.spot(&v.beam, &inc, shadow));
        r.field(
            "nearest_beam",
            "nearest beam",
            near.map_or(Value::Missing, |v| {
                Value::Text(format!("{},{}", v.beam.rod[0], v.beam.rod[1]))
            }),
        );
        r.field(
            "nearest_offset_deg",
            "its angle from the spot (deg)",
            Value::opt(near.map(|v| v.offset_deg), 3),
        );
        r.field(
            "nearest_x_mm",
            "its x (mm)",
            Value::opt(at.map(|s| s.at.x_mm), 2),
        );
        r.field(
            "nearest_y_mm",
            "its y (mm)",
            Value::opt(at.map(|s| s.at.y_mm), 2),
        );
    }
    r.field("count", "spots", Value::Int(l.stored as i64));
    r.field(
        "shadowed_count",
        "hidden by the gun",
        Value::Int(spots.iter().filter(|s| s.shadowed).count() as i64),
    );
    truncated_field(&mut r, l.truncated);
    let mut list = List {
        key: "spots",
        columns: vec![
            col("h", "h"),
            col("k", "k"),
            col("x_mm", "x (mm)"),
            col("y_mm", "y (mm)"),
            col("from_axis_deg", "from axis (deg)"),
            col("exit_deg", "exit (deg)"),
            col("shadowed", "hidden"),
        ],
        rows: Vec::new(),
    };
    for s in spots {
        list.rows.push(vec![
            Value::Int(s.beam.rod[0].into()),
            Value::Int(s.beam.rod[1].into()),
            Value::F32(s.at.x_mm, 2),
            Value::F32(s.at.y_mm, 2),
            Value::F32(s.at.from_axis_deg, 3),
            Value::F32(s.beam.exit_deg, 3),
            Value::Bool(s.shadowed),
        ]);
    }
    r.list = Some(list);
    Ok(r)
}

/// The screen's fields: its kind and every size (null where the kind has none).
fn screen_fields(r: &mut Report, s: &Screen) {
    let (kind, radius, rim, flat) = match *s {
        Screen::Hemisphere { radius_mm, rim_deg } => {
            ("hemisphere", Some(radius_mm), Some(rim_deg), None)
        }
        Screen::Flat {
            distance_mm,
            arm_deg,
            elevation_deg,
            half_width_mm,
            half_height_mm,
        } => (
            "flat",
            None,
            None,
            Some([
                distance_mm,
                arm_deg,
                elevation_deg,
                half_width_mm,
                half_height_mm,
            ]),
        ),
    };
    r.field("screen", "screen", Value::Text(kind.into()));
    r.field("radius_mm", "radius (mm)", Value::opt(radius, 2));
    r.field("rim_deg", "rim (deg)", Value::opt(rim, 2));
    let f = |i: usize| Value::opt(flat.map(|v| v[i]), 2);
    r.field("distance_mm", "distance (mm)", f(0));
    r.field("detector_arm_deg", "detector arm (deg)", f(1));
    r.field("detector_elevation_deg", "detector elevation (deg)", f(2));
    r.field("half_width_mm", "half-width (mm)", f(3));
    r.field("half_height_mm", "half-height (mm)", f(4));
}

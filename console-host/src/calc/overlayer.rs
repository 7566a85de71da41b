//! `mwctl calc beams --overlayer …`: the beams of a superstructure (and its domains) with
//! the core's superstructure, Wood and domain code.

use super::*;
use matterwave_core::surface::domains::{self, Domain, MAX_DOMAINS};
use matterwave_core::surface::{union_beams, FracRod, SuperBeam, Superstructure, Wood};

/// Parses `--overlayer` (matrix or Wood notation) on the face's mesh.
pub fn parse_overlayer(text: &str, face: &Face) -> CliResult<Superstructure> {
    Superstructure::parse(text, face).ctx(format_args!("--overlayer '{text}'"))
}

/// Parses `--beam` as integer or fractional indices (`1,0`, `1/2,0`).
pub fn parse_frac_rod(text: &str) -> CliResult<FracRod> {
    FracRod::parse(text).ctx(format_args!("--beam '{text}'"))
}

fn wood_text(face: &Face, s: &Superstructure) -> Value {
    Wood::from_matrix(face, s).map_or(Value::Missing, |w| {
        let mut t = String::new();
        let _ = w.write_to(&mut t, false);
        Value::Text(t)
    })
}

fn op_text(d: &Domain) -> String {
    if d.op.mirror {
        format!("mirror {}", d.op.angle_deg)
    } else {
        format!("rotate {}", d.op.angle_deg)
    }
}

/// What `--overlayer` asks for: the superstructure text and whether to add its domains.
#[derive(Clone, Copy, Debug)]
pub struct OverlayerArgs<'a> {
    /// `--overlayer`: Wood notation or a matrix.
    pub text: &'a str,
    /// `--domains`.
    pub domains: bool,
    /// `--temperature`.
    pub sample: &'a super::SampleArgs,
}

/// `mwctl calc beams --overlayer TEXT [--domains]`.
pub fn overlayer_beams(
    id: &str,
    face_text: &str,
    g: &GunArgs,
    tilt: f32,
    azimuth: f32,
    max: usize,
    o: OverlayerArgs<'_>,
) -> CliResult<Report> {
    let (overlayer, with_domains) = (o.text, o.domains);
    let c = &super::crystal_at(id, o.sample)?;
    let (_, face) = face_of(c, face_text)?;
    let sup = parse_overlayer(overlayer, &face)?;
    let g = &g.at_face(c, &face)?;
    let e = g.kinetic_ev()?;
    let tilt = check_angle(tilt, "tilt", matterwave_core::surface::TILT_MAX_DEG)?;
    let azimuth = check_angle(azimuth, "azimuth", 360.0)?;
    let inc = Incidence::new(e, tilt, azimuth).ctx("incidence")?;
    let mut doms = [Domain::EMPTY; MAX_DOMAINS];
    let n_dom = if with_domains {
        domains::domains(&face, &sup, &mut doms)
    } else {
        doms[0] = Domain {
            sup,
            op: domains::MeshOp::IDENTITY,
        };
        1
    };
    let sups: Vec<Superstructure> = doms[..n_dom].iter().map(|d| d.sup).collect();
    let mut buf = vec![SuperBeam::EMPTY; check_max(max)?];
    let l = union_beams(&face, &inc, &sups, &mut buf).ctx("beam listing")?;
    let mut r = Report::default();
    face_fields(&mut r, c, &face);
    g.fields(&mut r, e);
    incidence_fields(&mut r, &inc);
    r.field(
        "overlayer_matrix",
        "overlayer matrix",
        Value::Text(sup.to_string()),
    );
    r.field("overlayer_wood", "Wood notation", wood_text(&face, &sup));
    r.field(
        "overlayer_cells",
        "substrate cells per cell",
        Value::F32(sup.cells(), 4),
    );
    r.field(
        "point_group",
        "mesh point group",
        Value::Text(domains::point_group_name(face.mesh_kind()).into()),
    );
    r.field("domain_count", "domains", Value::Int(n_dom as i64));
    r.field(
        "domain_matrices",
        "domain matrices",
        Value::List(sups.iter().map(|s| Value::Text(s.to_string())).collect()),
    );
    r.field(
        "domain_ops",
        "domain operations",
        Value::List(
            doms[..n_dom]
                .iter()
                .map(|d| Value::Text(op_text(d)))
                .collect(),
        ),
    );
    let mut list = List {
        key: "beams",
        columns: vec![
            col("hk", "h,k"),
            col("h", "h"),
            col("k", "k"),
            col("integer_order", "integer order"),
            col("domains", "domains"),
            col("row_spacing_a", "row spacing (Å)"),
            col("exit_deg", "exit (deg)"),
            col("exit_azimuth_deg", "exit azimuth (deg)"),
            col("emergence_ev", "emerges at (eV)"),
            col("emergence_nominal_ev", "emerges at nominal (eV)"),
        ],
        rows: Vec::new(),
    };
    let mut fractional = 0i64;
    for b in &buf[..l.stored] {
        if !b.integer {
            fractional += 1;
        }
        let comp = |i: usize| {
            let (n, d) = b.pos.reduced(i);
            if d == 1 {
                Value::Int(n.into())
            } else {
                Value::F64(f64::from(n) / f64::from(d), 4)
            }
        };
        let doms_of: Vec<Value> = (0..n_dom)
            .filter(|i| b.domains & (1u16 << i) != 0)
            .map(|i| Value::Int(i as i64))
            .collect();
        list.rows.push(vec![
            Value::Text(b.pos.to_string()),
            comp(0),
            comp(1),
            Value::Bool(b.integer),
            Value::List(doms_of),
            Value::opt(b.beam.row_spacing_a(), 4),
            Value::F32(b.beam.exit_deg, 3),
            Value::F32(b.beam.exit_azimuth_deg, 2),
            Value::opt(b.beam.emergence_ev, 2),
            Value::opt(b.beam.emergence_ev.map(|x| x - g.correction_ev()), 2),
        ]);
    }
    r.field("count", "beams", Value::Int(l.stored as i64));
    r.field(
        "fractional",
        "fractional-order beams",
        Value::Int(fractional),
    );
    truncated_field(&mut r, l.truncated);
    r.list = Some(list);
    Ok(r)
}

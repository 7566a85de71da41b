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

/// A superstructure and the domains it is shown with: domain 0 is the superstructure
/// itself, and without `--domains` it is the only one (the list and the order of the
/// core's `Overlayer::supers`, so a beam's domain bit i is `doms[i]`).
#[derive(Clone, Debug)]
pub struct Overlayer {
    /// The superstructure.
    pub sup: Superstructure,
    /// Its domains, domain 0 first.
    pub doms: Vec<Domain>,
    /// Whether `--domains` asked for them.
    pub with_domains: bool,
}

impl Overlayer {
    /// `sup` alone, or with the core's domains on the face's mesh.
    pub fn resolve(sup: &Superstructure, with_domains: bool, face: &Face) -> Overlayer {
        let mut doms = [Domain::EMPTY; MAX_DOMAINS];
        let n = if with_domains {
            domains::domains(face, sup, &mut doms)
        } else {
            doms[0] = Domain {
                sup: *sup,
                op: domains::MeshOp::IDENTITY,
            };
            1
        };
        Overlayer {
            sup: *sup,
            doms: doms[..n].to_vec(),
            with_domains,
        }
    }

    /// Parses `--overlayer TEXT` on the face's mesh, with its domains for `--domains`.
    pub fn parse(text: &str, with_domains: bool, face: &Face) -> CliResult<Overlayer> {
        Ok(Overlayer::resolve(
            &parse_overlayer(text, face)?,
            with_domains,
            face,
        ))
    }

    /// The domains' matrices, domain 0 first.
    pub fn supers(&self) -> Vec<Superstructure> {
        self.doms.iter().map(|d| d.sup).collect()
    }

    /// The core's value for plans: the superstructure and whether with its domains.
    pub fn core(&self) -> matterwave_core::surface::domains::Overlayer {
        matterwave_core::surface::domains::Overlayer::new(self.sup, self.with_domains)
    }

    /// The report fields of `--overlayer`: matrix, Wood notation, cells, point group
    /// and the domains (docs/JSON.md, `calc beams`).
    pub fn fields(&self, r: &mut Report, face: &Face) {
        let sup = &self.sup;
        r.field(
            "overlayer_matrix",
            "overlayer matrix",
            Value::Text(sup.to_string()),
        );
        r.field("overlayer_wood", "Wood notation", wood_text(face, sup));
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
        r.field(
            "domain_count",
            "domains",
            Value::Int(self.doms.len() as i64),
        );
        r.field(
            "domain_matrices",
            "domain matrices",
            Value::List(
                self.doms
                    .iter()
                    .map(|d| Value::Text(d.sup.to_string()))
                    .collect(),
            ),
        );
        r.field(
            "domain_ops",
            "domain operations",
            Value::List(self.doms.iter().map(|d| Value::Text(op_text(d))).collect()),
        );
    }

    /// A beam's domain bits as the list of domain indices.
    pub fn domain_list(&self, bits: u16) -> Value {
        Value::List(
            (0..self.doms.len())
                .filter(|i| bits & (1u16 << i) != 0)
                .map(|i| Value::Int(i as i64))
                .collect(),
        )
    }
}

/// Component `i` (0 = h, 1 = k) of a position: an integer when whole, else the number
/// numerator/denominator (the exact label is `FracRod`'s text, `1/2,0`).
pub fn frac_component(pos: &FracRod, i: usize) -> Value {
    let (n, d) = pos.reduced(i);
    if d == 1 {
        Value::Int(n.into())
    } else {
        Value::F64(f64::from(n) / f64::from(d), 4)
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
    let ov = Overlayer::resolve(&sup, with_domains, &face);
    let sups = ov.supers();
    let mut buf = vec![SuperBeam::EMPTY; check_max(max)?];
    let l = union_beams(&face, &inc, &sups, &mut buf).ctx("beam listing")?;
    let mut r = Report::default();
    face_fields(&mut r, c, &face);
    g.fields(&mut r, e);
    incidence_fields(&mut r, &inc);
    ov.fields(&mut r, &face);
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
        list.rows.push(vec![
            Value::Text(b.pos.to_string()),
            frac_component(&b.pos, 0),
            frac_component(&b.pos, 1),
            Value::Bool(b.integer),
            ov.domain_list(b.domains),
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

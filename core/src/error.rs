//! Errors as values: every failure has a stable numeric code and a message a technician
//! can act on.
//!
//! Codes are grouped by hundreds: 1xx bad input values, 2xx physics (no solution), 3xx
//! axes and motion, 4xx protocol. Codes never change meaning once published; new
//! errors get new codes. The host prints `E<code>: <message>`; the serial protocol sends
//! the same code.

/// Which physical quantity an input error is about.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Quantity {
    /// Beam energy (eV).
    Energy,
    /// Wavelength (Å).
    Wavelength,
    /// Inner potential V0 (eV).
    InnerPotential,
    /// Work function (eV).
    WorkFunction,
    /// Gun energy offset (eV).
    EnergyOffset,
    /// Sample tilt (degrees).
    Tilt,
    /// Sample azimuth (degrees).
    Azimuth,
    /// Any angle (degrees).
    Angle,
    /// A length such as a screen distance (mm) or a d-spacing (Å).
    Length,
    /// Miller or beam indices.
    Index,
    /// A count, step or size parameter.
    Count,
    /// One standard deviation of the beam energy (eV).
    EnergySpread,
    /// One standard deviation of the arm zero (degrees).
    ArmZeroSigma,
    /// Sample temperature (K).
    Temperature,
}

impl Quantity {
    /// Lower-case name with its unit, for messages.
    pub const fn name(self) -> &'static str {
        match self {
            Quantity::Energy => "energy (eV)",
            Quantity::Wavelength => "wavelength (Å)",
            Quantity::InnerPotential => "inner potential (eV)",
            Quantity::WorkFunction => "work function (eV)",
            Quantity::EnergyOffset => "energy offset (eV)",
            Quantity::Tilt => "tilt (deg)",
            Quantity::Azimuth => "azimuth (deg)",
            Quantity::Angle => "angle (deg)",
            Quantity::Length => "length",
            Quantity::Index => "index",
            Quantity::Count => "count",
            Quantity::EnergySpread => "energy spread (eV, one standard deviation)",
            Quantity::ArmZeroSigma => "arm-zero uncertainty (deg, one standard deviation)",
            Quantity::Temperature => "sample temperature (K)",
        }
    }
}

/// A motor axis of the goniometer, named in axis errors.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum AxisId {
    /// Detector arm angle δ (about z).
    Arm,
    /// Detector elevation ν (out of the scattering plane).
    Elevation,
    /// Sample tilt α (about z).
    Tilt,
    /// Sample azimuth φ (about the surface normal).
    Azimuth,
}

impl AxisId {
    /// Every axis, in protocol order.
    pub const ALL: [AxisId; 4] = [
        AxisId::Arm,
        AxisId::Elevation,
        AxisId::Tilt,
        AxisId::Azimuth,
    ];

    /// Lower-case name used in messages, rig files and the protocol.
    pub const fn name(self) -> &'static str {
        match self {
            AxisId::Arm => "arm",
            AxisId::Elevation => "elevation",
            AxisId::Tilt => "tilt",
            AxisId::Azimuth => "azimuth",
        }
    }

    /// Inverse of [`AxisId::name`].
    pub fn from_name(name: &str) -> Option<AxisId> {
        AxisId::ALL.iter().copied().find(|a| a.name() == name)
    }
}

/// Everything that can go wrong in the core.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[non_exhaustive]
pub enum Error {
    /// A number was NaN or infinite.
    NotFinite(Quantity),
    /// A number was below the accepted range.
    TooLow(Quantity),
    /// A number was above the accepted range.
    TooHigh(Quantity),
    /// The kinetic energy at the sample, after contact-potential and offset corrections,
    /// is below 1 eV.
    KineticEnergyTooLow,
    /// Miller indices (0,0,0) name no plane.
    ZeroIndices,
    /// Text that is not three (or, for hexagonal crystals, four) integer indices.
    BadIndexText,
    /// Indices too large for the fixed tables and search boxes (|index| > 12).
    IndicesTooLarge,
    /// Four-index hexagonal indices with i ≠ −(h+k).
    BadHexIndices,
    /// Four-index indices given for a cubic, tetragonal or orthorhombic crystal.
    HexIndicesOnNonHexagonal,
    /// Lattice constants not positive and finite.
    BadLattice,
    /// No crystal with that id in the table.
    UnknownCrystal,
    /// The beam is evanescent: |k∥| exceeds 1/λ at this energy and incidence.
    Evanescent,
    /// n·λ > 2d: this reflection has no Bragg angle at this energy.
    NoBraggAngle,
    /// 2θ is 90° or more: the ring never reaches a flat screen.
    BeyondScreen,
    /// The lattice search found no surface mesh for this face.
    NoSurfaceMesh,
    /// No output slot was given (a zero-length buffer).
    EmptyBuffer,
    /// The energy window is empty or reversed.
    EmptyRange,
    /// Target below the axis's lower soft limit.
    BelowLimit(AxisId),
    /// Target above the axis's upper soft limit.
    AboveLimit(AxisId),
    /// Target inside forbidden zone number `zone` (0-based) of the axis.
    InZone(AxisId, u8),
    /// The straight path to the target crosses forbidden zone `zone` of the axis.
    PathCrossesZone(AxisId, u8),
    /// Axis configuration invalid (steps per degree, limits, zones, speed or
    /// acceleration not positive/finite/ordered).
    BadAxisConfig(AxisId),
    /// The step count would overflow the axis's ±2^30 microstep range.
    StepOverflow(AxisId),
    /// The rig has no such axis (e.g. elevation on a one-circle arm).
    NoSuchAxis(AxisId),
    /// Every geometric solution is outside the limits or in a forbidden zone.
    NoReachableSolution,
    /// A fit needs more (or less degenerate) points.
    TooFewPoints,
    /// The fit's normal equations are singular: the points do not fix the parameters.
    DegenerateFit,
    /// A fit or iteration did not converge.
    NoConvergence,
    /// Protocol: the request line exceeded the maximum length.
    LineTooLong,
    /// Protocol: the request line held a non-ASCII byte or a control character.
    BadByte,
    /// Protocol: the `*XXXX` checksum suffix is malformed or does not match.
    BadChecksum,
    /// Protocol: unknown command word.
    UnknownCommand,
    /// Protocol: an argument the command does not take (unknown key, extra value).
    UnknownArgument,
    /// Protocol: a required argument is missing.
    MissingArgument,
    /// Protocol: a number could not be read (NaN, inf, out of f32 range, not a number).
    BadNumber,
    /// Protocol: a word value is not one of those accepted, or arguments are malformed.
    BadValue,
    /// Protocol: motion needs `enable` first.
    NotEnabled,
    /// Protocol: the interlock input reports unsafe; no motion.
    InterlockOpen,
    /// Protocol: a list is still streaming; send `stop` to abort it.
    Busy,
    /// Protocol: the streaming request was aborted by `stop`.
    Aborted,
    /// Protocol: no stored aim solution with that index.
    NoSuchSolution,
    /// Protocol: the sample buffer is full.
    BufferFull,
    /// Protocol: the reply would exceed the reply line limit.
    ReplyTooLong,
    /// A crystal with no table face was chosen without `face=`.
    FaceNeeded,
    /// A branch preference of +1 or −1 was given for two-circle aiming (at a fixed
    /// azimuth), where the azimuth, not a branch, decides the pose.
    BranchNeedsInPlane,
    /// `table` was asked for a per-face value the crystal table does not have.
    NoTableValue(Quantity),
    /// The axis's home (step 0) lies outside its soft limits.
    HomeOutsideLimits(AxisId),
    /// The soft limits lie farther from home than the step counter reaches.
    ReachBeyondCounter(AxisId),
    /// Forbidden zone `zone` lies (partly) outside the soft limits.
    ZoneOutsideLimits(AxisId, u8),
    /// Forbidden zone `zone` overlaps a zone with a lower index.
    ZonesOverlap(AxisId, u8),
    /// The zones forbid the whole range of the axis.
    RangeForbidden(AxisId),
    /// Where the axis stands is unknown (since `reset`, or a change of its calibration):
    /// it must be homed or its position declared before it moves.
    PositionUnknown(AxisId),
    /// Motion is enabled, or an axis is still moving: configuration changes and
    /// position declarations need motion disabled and every axis at rest.
    MotionEnabled,
    /// One microstep of the axis is coarser than the detector acceptance half-angle
    /// (or, for an axis alone, than [`crate::axis::MIN_STEPS_PER_DEG`] allows).
    StepTooCoarse(AxisId),
    /// The nearest allowed whole step misses the target by more than the detector
    /// acceptance half-angle.
    ResidualTooLarge(AxisId),
    /// A `move` while an axis is still moving (from an earlier `move`).
    AxisMoving,
    /// The sample temperature lies outside the range the crystal's thermal-expansion
    /// data hold for (the table's `expansion_range_k`).
    TemperatureOutsideData,
    /// The energy-dependent inner potential was asked for a face the crystal table gives
    /// no V0(E) form for.
    NoEnergyForm,
    /// A top-layer relaxation asked for together with the energy-dependent inner
    /// potential: the relaxation shifts are modelled with a constant V0 only.
    RelaxationNeedsConstantV0,
    /// Superstructure text that is neither a matrix nor Wood notation.
    BadSuperstructureText,
    /// A superstructure matrix with determinant 0.
    SingularSuperstructure,
    /// A Wood label whose scaled, rotated mesh vectors are not lattice vectors of this
    /// face's mesh: it names no matrix here.
    WoodNotOnMesh,
    /// A superstructure beyond the bounds (entries ±24, denominators 1–4, 64 cells).
    SuperstructureTooLarge,
    /// Beam text that is not two fractions h,k (denominators 1–99).
    BadFractionalBeam,
    /// A fractional-order beam that is not a beam of the overlayer set (nor, with its
    /// domains, of any of its domains).
    NotOverlayerBeam,
    /// A fractional-order beam given to a model that holds for integer-order beams only
    /// (the kinematic I-V maxima, the error budget's lattice term).
    IntegerBeamsOnly,
}

impl Error {
    /// Stable numeric code.
    pub const fn code(self) -> u16 {
        match self {
            Error::NotFinite(_) => 101,
            Error::TooLow(_) => 102,
            Error::TooHigh(_) => 103,
            Error::KineticEnergyTooLow => 104,
            Error::ZeroIndices => 110,
            Error::IndicesTooLarge => 111,
            Error::BadIndexText => 116,
            Error::BadHexIndices => 112,
            Error::HexIndicesOnNonHexagonal => 113,
            Error::BadLattice => 114,
            Error::UnknownCrystal => 115,
            Error::EmptyBuffer => 120,
            Error::EmptyRange => 121,
            Error::Evanescent => 201,
            Error::NoBraggAngle => 202,
            Error::BeyondScreen => 203,
            Error::NoSurfaceMesh => 204,
            Error::NoReachableSolution => 205,
            Error::TooFewPoints => 250,
            Error::DegenerateFit => 251,
            Error::NoConvergence => 252,
            Error::BelowLimit(_) => 301,
            Error::AboveLimit(_) => 302,
            Error::InZone(_, _) => 303,
            Error::PathCrossesZone(_, _) => 304,
            Error::BadAxisConfig(_) => 305,
            Error::StepOverflow(_) => 306,
            Error::NoSuchAxis(_) => 307,
            Error::LineTooLong => 400,
            Error::BadByte => 401,
            Error::BadChecksum => 402,
            Error::UnknownCommand => 403,
            Error::UnknownArgument => 404,
            Error::MissingArgument => 405,
            Error::BadNumber => 406,
            Error::BadValue => 407,
            Error::NotEnabled => 408,
            Error::InterlockOpen => 409,
            Error::Busy => 410,
            Error::Aborted => 411,
            Error::NoSuchSolution => 412,
            Error::BufferFull => 413,
            Error::ReplyTooLong => 420,
            Error::FaceNeeded => 130,
            Error::BranchNeedsInPlane => 131,
            Error::NoTableValue(_) => 132,
            Error::HomeOutsideLimits(_) => 315,
            Error::ReachBeyondCounter(_) => 316,
            Error::ZoneOutsideLimits(_, _) => 317,
            Error::ZonesOverlap(_, _) => 318,
            Error::RangeForbidden(_) => 319,
            Error::PositionUnknown(_) => 320,
            Error::MotionEnabled => 321,
            Error::StepTooCoarse(_) => 322,
            Error::ResidualTooLarge(_) => 323,
            Error::AxisMoving => 324,
            Error::TemperatureOutsideData => 160,
            Error::NoEnergyForm => 161,
            Error::RelaxationNeedsConstantV0 => 162,
            Error::BadSuperstructureText => 165,
            Error::SingularSuperstructure => 166,
            Error::WoodNotOnMesh => 167,
            Error::SuperstructureTooLarge => 168,
            Error::BadFractionalBeam => 169,
            Error::NotOverlayerBeam => 170,
            Error::IntegerBeamsOnly => 171,
        }
    }

    /// What is wrong and what to do, in one short line.
    pub const fn message(self) -> &'static str {
        match self {
            Error::NotFinite(_) => "value is NaN or infinite; give a finite number",
            Error::TooLow(q) => match q {
                Quantity::Energy => "energy below 1 eV; accepted 1 eV to 300000 eV",
                Quantity::InnerPotential => "inner potential negative; accepted 0 to 100 eV",
                Quantity::WorkFunction => "work function negative; accepted 0 to 10 eV",
                Quantity::Wavelength => {
                    "wavelength too short or not positive: energy would be above 300 keV; accepted 0.0197 to 12.26 Å"
                }
                Quantity::Length => "length must be positive",
                Quantity::Count => "count or step must be positive",
                Quantity::EnergySpread => "energy spread negative; accepted 0 to 100 eV",
                Quantity::ArmZeroSigma => "arm-zero uncertainty negative; accepted 0 to 10 deg",
                _ => "value below the accepted range",
            },
            Error::TooHigh(q) => match q {
                Quantity::Energy => "energy above 300 keV; accepted 1 eV to 300000 eV",
                Quantity::InnerPotential => "inner potential above 100 eV; accepted 0 to 100 eV",
                Quantity::WorkFunction => "work function above 10 eV; accepted 0 to 10 eV",
                Quantity::EnergyOffset => "energy offset beyond ±1000 eV",
                Quantity::Tilt => "tilt beyond ±89.9 deg",
                Quantity::Wavelength => {
                    "wavelength too long: energy would be below 1 eV; accepted 0.0197 to 12.26 Å"
                }
                Quantity::Count => "too many points or steps",
                Quantity::EnergySpread => "energy spread above 100 eV; accepted 0 to 100 eV",
                Quantity::ArmZeroSigma => "arm-zero uncertainty above 10 deg; accepted 0 to 10 deg",
                _ => "value above the accepted range",
            },
            Error::KineticEnergyTooLow => {
                "kinetic energy at the sample below 1 eV after work-function and offset corrections; raise the gun energy"
            }
            Error::ZeroIndices => "indices (0,0,0) name no plane",
            Error::BadIndexText => "indices must be three integers (four, h k i l, for hexagonal crystals)",
            Error::IndicesTooLarge => "indices too large: faces up to ±12, beams up to ±99",
            Error::BadHexIndices => "four-index (hkil) needs i = -(h+k)",
            Error::HexIndicesOnNonHexagonal => "four-index indices only apply to hexagonal crystals",
            Error::BadLattice => "lattice constants must be positive and finite",
            Error::UnknownCrystal => "unknown crystal id; list them with the crystals command",
            Error::EmptyBuffer => "no room for results (zero-length buffer)",
            Error::EmptyRange => "empty range: 'from' must be below 'to'",
            Error::Evanescent => {
                "beam is evanescent at this energy and incidence; raise the energy or change the tilt"
            }
            Error::NoBraggAngle => "n·λ exceeds 2d: no Bragg angle at this energy",
            Error::BeyondScreen => "scattering angle 2θ is 90° or more: the ring misses a flat screen",
            Error::NoSurfaceMesh => "no surface mesh found for this face",
            Error::NoReachableSolution => {
                "every solution lies outside the axis limits or in a forbidden zone"
            }
            Error::TooFewPoints => {
                "too few usable points for this fit (it needs more points than parameters: at least 3 for a peak, 3 for arm zero and offset, 2 for row spacing, 3 for V0 and spacing); add measurements"
            }
            Error::DegenerateFit => {
                "points do not determine the fit parameters; spread them over a wider range"
            }
            Error::NoConvergence => "the fit did not converge; check the data and starting values",
            Error::BelowLimit(_) => "target below the axis's lower soft limit",
            Error::AboveLimit(_) => "target above the axis's upper soft limit",
            Error::InZone(_, _) => "target inside a forbidden zone of the axis",
            Error::PathCrossesZone(_, _) => "path to the target crosses a forbidden zone",
            Error::BadAxisConfig(_) => {
                "axis configuration invalid: steps/deg, speed, acceleration > 0; min < max; zones inside limits with from < to"
            }
            Error::StepOverflow(_) => "target needs more microsteps than the axis counter holds",
            Error::NoSuchAxis(_) => "this rig has no such axis",
            Error::LineTooLong => "line too long; at most 120 bytes before the line end",
            Error::BadByte => "line holds a non-ASCII byte or control character; send printable ASCII",
            Error::BadChecksum => "checksum suffix malformed or wrong; end the line with a star and the 4 hex digits of its CRC-16",
            Error::UnknownCommand => "unknown command; send help for the list",
            Error::UnknownArgument => "argument not taken by this command; send help for its arguments",
            Error::MissingArgument => "a required argument is missing; send help for the arguments",
            Error::BadNumber => "not a finite number within range",
            Error::BadValue => "value not accepted; send help for the accepted words",
            Error::NotEnabled => "motion is disabled; send enable first",
            Error::InterlockOpen => "interlock reports unsafe; no motion until it is safe",
            Error::Busy => "a list is still streaming; wait or send stop",
            Error::Aborted => "aborted by stop",
            Error::NoSuchSolution => "no stored solution with that index; send aim first",
            Error::BufferFull => "sample buffer full; send pt clear",
            Error::ReplyTooLong => "reply too long; ask for fewer fields",
            Error::FaceNeeded => "this crystal has no table face; give face= with the crystal",
            Error::NoTableValue(_) => {
                "the crystal table has no value for this face; give a number instead of table"
            }
            Error::BranchNeedsInPlane => {
                "branch +1 or -1 applies to in-plane aiming only; set the azimuth free or use branch nearest"
            }
            Error::HomeOutsideLimits(_) => {
                "home (step 0) lies outside the soft limits; set home_offset_deg between min_deg and max_deg"
            }
            Error::ReachBeyondCounter(_) => {
                "the limits lie beyond the step counter's reach (2^24 steps from home); narrow them or lower steps_per_deg"
            }
            Error::ZoneOutsideLimits(_, _) => "forbidden zone reaches outside the soft limits; keep it within min_deg..max_deg",
            Error::ZonesOverlap(_, _) => "forbidden zone overlaps another; merge them into one zone",
            Error::RangeForbidden(_) => "the zones forbid the whole range of the axis; remove or shrink one",
            Error::PositionUnknown(_) => {
                "position unknown since reset or a calibration change; disable, then home name=AXIS [at=DEG] to declare where it stands"
            }
            Error::MotionEnabled => {
                "motion is enabled or an axis is moving; send disable and wait for moving=0 before changing the configuration or declaring a position"
            }
            Error::StepTooCoarse(_) => {
                "steps_per_deg too low: one step is coarser than the detector acceptance (20 deg at most); check the microstepping and gear"
            }
            Error::ResidualTooLarge(_) => {
                "the nearest allowed step misses the target by more than the detector acceptance; choose another target or a finer step"
            }
            Error::AxisMoving => {
                "an axis is still moving; wait until status shows moving=0, or send stop"
            }
            Error::TemperatureOutsideData => {
                "sample temperature outside the range of this crystal's thermal-expansion data; the crystals listing gives the range (K), or use the table temperature"
            }
            Error::NoEnergyForm => {
                "the crystal table has no energy-dependent V0(E) for this face; use the constant inner-potential model"
            }
            Error::RelaxationNeedsConstantV0 => {
                "a top-layer relaxation is modelled with a constant inner potential only; use the constant model, or set the relaxation to 0"
            }
            Error::BadSuperstructureText => {
                "superstructure not understood; give a matrix m11,m12,m21,m22 (e.g. 2,0,0,2 or 1/2,0,0,1/2) or Wood notation p(2x2), c(2x2), (sqrt3xsqrt3)R30"
            }
            Error::SingularSuperstructure => {
                "superstructure matrix is singular (determinant 0); its rows must be two non-parallel mesh vectors"
            }
            Error::WoodNotOnMesh => {
                "this Wood label names no matrix on this face's mesh (the scaled, rotated vectors are not lattice vectors); check the angle or give the matrix"
            }
            Error::SuperstructureTooLarge => {
                "superstructure too large; accepted: matrix entries within ±24, denominators 1 to 4, at most 64 substrate cells, Wood n² and m² 1 to 64"
            }
            Error::BadFractionalBeam => {
                "beam must be two numbers h,k, integers or fractions such as 1/2,0 or 1/3,1/3 (denominators 1 to 99)"
            }
            Error::NotOverlayerBeam => {
                "this fractional beam is not a beam of the overlayer (nor of its domains); set the overlayer first, or give a beam of its lattice (the beams list shows them)"
            }
            Error::IntegerBeamsOnly => {
                "modelled for integer-order beams only (I-V maxima and the budget's lattice term vary the bulk cell); give an integer beam, or use aim and plan kind=track for a fractional one"
            }
        }
    }

    /// The axis an axis error refers to, if any.
    pub const fn axis(self) -> Option<AxisId> {
        match self {
            Error::BelowLimit(a)
            | Error::AboveLimit(a)
            | Error::InZone(a, _)
            | Error::PathCrossesZone(a, _)
            | Error::BadAxisConfig(a)
            | Error::StepOverflow(a)
            | Error::NoSuchAxis(a)
            | Error::HomeOutsideLimits(a)
            | Error::ReachBeyondCounter(a)
            | Error::ZoneOutsideLimits(a, _)
            | Error::ZonesOverlap(a, _)
            | Error::RangeForbidden(a)
            | Error::PositionUnknown(a)
            | Error::StepTooCoarse(a)
            | Error::ResidualTooLarge(a) => Some(a),
            _ => None,
        }
    }

    /// The quantity an input error refers to, if any.
    pub const fn quantity(self) -> Option<Quantity> {
        match self {
            Error::NotFinite(q) | Error::TooLow(q) | Error::TooHigh(q) => Some(q),
            _ => None,
        }
    }
}

impl core::fmt::Display for Error {
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        match self.quantity() {
            Some(q) if matches!(self, Error::NotFinite(_)) => {
                write!(
                    f,
                    "E{}: {} is NaN or infinite; give a finite number",
                    self.code(),
                    q.name()
                )
            }
            _ => write!(f, "E{}: {}", self.code(), self.message()),
        }
    }
}

/// Result with the core's [`Error`].
pub type Result<T> = core::result::Result<T, Error>;

/// `Ok(x)` when `x` is finite, else `NotFinite(q)`.
#[inline]
pub(crate) fn finite(x: f32, q: Quantity) -> Result<f32> {
    if x.is_finite() {
        Ok(x)
    } else {
        Err(Error::NotFinite(q))
    }
}

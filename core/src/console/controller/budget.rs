//! `budget`: the angular error budget of the arm aimed at the current beam — the same
//! core function (`budget::arm_budget`) as `mwctl calc budget`.

use embedded_io::Write;

use super::args::opt_num;
use super::fault::{check_used, Result};
use super::{Console, Rw, Stream};
use crate::budget::{self, ArmBudget, ArmBudgetInputs};
use crate::console::board::{AxisDriver, Detector, Interlock};
use crate::console::wire::token::Args;

/// Default energy spread, eV (one σ; a thermionic cathode's is a few tenths of an eV,
/// common practice, no source).
pub const DEFAULT_ENERGY_SPREAD_EV: f32 = 0.3;
/// Default arm-zero uncertainty, degrees (one σ).
pub const DEFAULT_ARM_ZERO_SIGMA_DEG: f32 = 0.02;

impl<A: AxisDriver, D: Detector, I: Interlock> Console<A, D, I> {
    /// `budget [energy_spread=EV] [arm_zero_sigma=DEG]`: streams one item per
    /// contribution, then the totals.
    pub(super) fn cmd_budget(&mut self, a: &mut Args<'_>) -> Result<Option<Stream>> {
        let spread = opt_num(a, "energy_spread")?.unwrap_or(DEFAULT_ENERGY_SPREAD_EV);
        let zero = opt_num(a, "arm_zero_sigma")?.unwrap_or(DEFAULT_ARM_ZERO_SIGMA_DEG);
        check_used(a)?;
        let pos = self.position();
        let s = &self.settings;
        // The lattice term varies the bulk cell, which a fractional grid is not.
        let rod = s.integer_beam()?;
        let e = s.gun.kinetic_energy_ev()?;
        let b = budget::arm_budget(
            &s.rig,
            &s.aim_request(rod, e, s.branch),
            &pos,
            &ArmBudgetInputs {
                energy_spread_ev: spread,
                arm_zero_sigma_deg: zero,
                lattice_sigma_a: s.crystal.a_uncertainty_a,
            },
        )?;
        Ok(Some(Stream::Budget(b, 0)))
    }
}

/// Writes line `i` of a budget stream; false when that line is the final one.
pub(super) fn budget_step<W: Write>(b: &ArmBudget, i: &mut u8, rw: &mut Rw<'_, W>) -> bool {
    let terms = b.budget.contributions();
    match terms.get(usize::from(*i)) {
        Some(t) => {
            let mut name = [0u8; 32];
            rw.item()
                .field_str("contribution", underscored(t.name, &mut name))
                .field_f32_rt("deg", t.deg);
            *i = i.saturating_add(1);
            true
        }
        None => {
            rw.ok()
                .field_f32_rt("arm", b.arm_deg)
                .field_f32_rt("d_arm_d_energy", b.d_arm_d_energy_deg_per_ev)
                .field_f32_rt("d_arm_d_lattice", b.d_arm_d_lattice_deg_per_a)
                .field_f32_rt("total", b.budget.total_deg());
            false
        }
    }
}

/// `name` with spaces as underscores (a protocol word), cut to `buf`.
fn underscored<'b>(name: &str, buf: &'b mut [u8; 32]) -> &'b str {
    let mut n = 0;
    for (slot, c) in buf.iter_mut().zip(name.bytes()) {
        *slot = if c == b' ' { b'_' } else { c };
        n += 1;
    }
    buf.get(..n)
        .and_then(|b| core::str::from_utf8(b).ok())
        .unwrap_or("")
}

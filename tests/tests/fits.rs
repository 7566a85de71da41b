//! Peak centring and calibration fits (`matterwave_core::fit`) on synthetic data.
//!
//! Every fit must recover the parameters it was given back from noisy data, within the
//! uncertainties it reports: over 300 noise realisations at most 2 % of the estimates
//! may lie beyond 4σ, the bias of the mean must be within 3 standard errors
//! (3·scatter/√n), and the mean reported σ must be within [0.8, 1.25] of the scatter
//! actually seen (the scatter of 300 draws is itself uncertain by about 4 %). Noise comes
//! from the shared deterministic generator (`matterwave_tests::Rng`, SplitMix64 +
//! Box–Muller), so every run sees the same numbers.
//!
//! Synthetic truths are generated in f64 from the textbook formulas with CODATA 2018
//! constants, independently of the core's f32 code.

use matterwave_core::beam;
use matterwave_core::fit::{
    arm_zero_and_energy_offset, arm_zero_and_energy_offset_multi, centroid,
    inner_potential_and_spacing, parabola_log, row_spacing, PeakCentre, Sample,
};
use matterwave_core::{Error, Quantity};
use matterwave_tests::Rng;

/// hc, eV·Å (CODATA 2018, exact: 12398.419843320 eV·Å).
const HC: f64 = 12_398.419_843_320;
/// Electron rest energy, eV (CODATA 2018: 510998.95000 eV).
const MC2: f64 = 510_998.95;

/// Cu(111) first-order row spacing, Å: nearest-neighbour distance a/√2 times √3/2 for
/// the rows of the close-packed plane, with a = 3.615 Å (Cu, room temperature, CRC
/// Handbook; from memory): 3.615/√2·√3/2 = 2.2137 Å.
const D_CU111_ROWS: f64 = 2.2137;
/// Cu(100) row spacing, Å: the square mesh side a/√2, a = 3.615 Å (as above).
const D_CU100_ROWS: f64 = 2.5562;
/// Ni(100) layer spacing, Å: a/2 with a = 3.524 Å (Ni, room temperature, CRC Handbook
/// of Chemistry and Physics, 97th ed., 3.5240 Å; from memory — the crystal table's value).
const D_NI100: f64 = 1.762;

/// Noise realisations per statistical test.
const SEEDS: u64 = 300;

/// Pull and scatter checks over many realisations: `est` and `sig` are the estimates
/// and their reported σ, `truth` the value the data were made from.
fn check_statistics(what: &str, truth: f64, est: &[f64], sig: &[f64]) {
    let n = est.len() as f64;
    let mean = est.iter().sum::<f64>() / n;
    let scatter = (est.iter().map(|e| (e - mean).powi(2)).sum::<f64>() / (n - 1.0)).sqrt();
    let mean_sigma = sig.iter().sum::<f64>() / n;
    let beyond = est
        .iter()
        .zip(sig)
        .filter(|(e, s)| (*e - truth).abs() > 4.0 * *s)
        .count();
    let worst = est
        .iter()
        .zip(sig)
        .map(|(e, s)| (e - truth).abs() / s)
        .fold(0.0f64, f64::max);
    eprintln!(
        "{what}: truth {truth}, mean {mean:.6}, scatter {scatter:.3e}, mean σ {mean_sigma:.3e} \
         (ratio {:.3}), bias {:.2} standard errors, beyond 4σ {beyond}/{}, worst pull {worst:.2}",
        mean_sigma / scatter,
        (mean - truth) / (scatter / n.sqrt()),
        est.len()
    );
    assert!(
        beyond as f64 <= 0.02 * n,
        "{what}: {beyond} of {} estimates beyond 4σ",
        est.len()
    );
    assert!(
        (mean - truth).abs() <= 3.0 * scatter / n.sqrt(),
        "{what}: bias {} beyond 3 standard errors ({scatter} / √{n})",
        mean - truth
    );
    let ratio = mean_sigma / scatter;
    assert!(
        (0.8..=1.25).contains(&ratio),
        "{what}: reported σ {mean_sigma} vs scatter {scatter} (ratio {ratio})"
    );
}

fn gaussian(angle: f64, centre: f64, sigma: f64, height: f64) -> f64 {
    height * (-(angle - centre).powi(2) / (2.0 * sigma * sigma)).exp()
}

/// A Gaussian peak sampled every `step` degrees from `start`, `n` samples.
fn sampled(start: f64, step: f64, n: usize, centre: f64, sigma: f64, height: f64) -> Vec<Sample> {
    (0..n)
        .map(|i| {
            let a = start + step * i as f64;
            Sample {
                angle_deg: a as f32,
                current: gaussian(a, centre, sigma, height) as f32,
            }
        })
        .collect()
}

/// Relativistic de Broglie wavelength, Å, f64.
fn lambda_a(energy_ev: f64) -> f64 {
    HC / (energy_ev * (energy_ev + 2.0 * MC2)).sqrt()
}

// ---------------------------------------------------------------------------------------
// Peak centring.

#[test]
fn parabola_log_gives_a_gaussian_centre_exactly() {
    // Synthetic data, truth chosen in the test: σ = 0.35°, step 0.2°, centres anywhere
    // between grid points.
    let (step, sigma) = (0.2, 0.35);
    let mut rng = Rng::seeded(1);
    for _ in 0..50 {
        let centre = 30.0 + step * rng.open_unit();
        let s = sampled(27.0, step, 31, centre, sigma, 850.0);
        let c: PeakCentre = parabola_log(&s).unwrap();
        assert!(
            (c.angle_deg as f64 - centre).abs() <= 1e-3 * step,
            "{centre}: {c:?}"
        );
        let fwhm = 2.0 * (2.0 * 2f64.ln()).sqrt() * sigma;
        assert!((c.fwhm_deg as f64 / fwhm - 1.0).abs() < 1e-3, "{c:?}");
        assert!((c.peak_current as f64 / 850.0 - 1.0).abs() < 1e-4, "{c:?}");
        // Current ≥ max/4 within ±1.665σ = ±0.58° of the centre: 5 or 6 grid points.
        assert!((5..=6).contains(&c.points_used), "{c:?}");
    }
}

#[test]
fn parabola_log_accepts_unsorted_samples() {
    // Synthetic data, truth chosen in the test.
    let mut s = sampled(10.0, 0.25, 25, 13.1, 0.6, 40.0);
    let sorted = parabola_log(&s).unwrap();
    // A fixed shuffle.
    let mut rng = Rng::seeded(7);
    for i in (1..s.len()).rev() {
        let j = (rng.next() % (i as u64 + 1)) as usize;
        s.swap(i, j);
    }
    let shuffled = parabola_log(&s).unwrap();
    assert!((shuffled.angle_deg - sorted.angle_deg).abs() < 1e-5);
    assert_eq!(shuffled.points_used, sorted.points_used);
    assert!((sorted.angle_deg - 13.1).abs() < 1e-4);
}

#[test]
fn parabola_log_with_noise_is_within_its_uncertainty() {
    // Synthetic data, truth chosen in the test: σ = 0.3°, step 0.1° (9 points used),
    // additive Gaussian noise of 1 % of the peak on every sample.
    let (centre, sigma, height, noise) = (42.0, 0.3, 1000.0, 10.0);
    let mut est = Vec::new();
    let mut sig = Vec::new();
    for seed in 0..SEEDS {
        let mut rng = Rng::seeded(100 + seed);
        let mut s = sampled(40.0, 0.1, 41, centre, sigma, height);
        for p in s.iter_mut() {
            p.current += (noise * rng.normal()) as f32;
        }
        let c = parabola_log(&s).unwrap();
        assert_eq!(c.points_used, 9);
        est.push(c.angle_deg as f64);
        sig.push(c.uncertainty_deg as f64);
    }
    check_statistics("parabola_log centre (deg)", centre, &est, &sig);
}

#[test]
fn centroid_of_a_symmetric_window_is_within_a_small_fraction_of_a_step() {
    // Synthetic data, truth chosen in the test: σ = 0.35°, step 0.2°, window ±2.4°
    // around the grid point nearest the centre, threshold at the background.
    let (step, sigma, background) = (0.2, 0.35, 3.0);
    // Centre on a grid point: symmetric, so exact up to rounding.
    let mut s = sampled(17.6, step, 25, 20.0, sigma, 500.0);
    for p in s.iter_mut() {
        p.current += background as f32;
    }
    let c = centroid(&s, background as f32).unwrap();
    assert!((c.angle_deg - 20.0).abs() < 1e-5, "{c:?}");
    // The outermost samples (6.9σ out) round to the background and are left out.
    let above = s.iter().filter(|p| p.current > background as f32).count();
    assert_eq!(c.points_used as usize, above);
    assert!(above >= 21);
    assert!((c.peak_current - 503.0).abs() < 1e-3);
    // Centre anywhere within half a step of the window's middle.
    let mut rng = Rng::seeded(2);
    for _ in 0..50 {
        let centre = 20.0 + step * (rng.open_unit() - 0.5);
        let mut s = sampled(17.6, step, 25, centre, sigma, 500.0);
        for p in s.iter_mut() {
            p.current += background as f32;
        }
        let c = centroid(&s, background as f32).unwrap();
        assert!(
            (c.angle_deg as f64 - centre).abs() <= 0.01 * step,
            "{centre}: {c:?}"
        );
        let fwhm = 2.0 * (2.0 * 2f64.ln()).sqrt() * sigma;
        assert!((c.fwhm_deg as f64 / fwhm - 1.0).abs() < 0.02, "{c:?}");
    }
}

#[test]
fn centroid_with_counting_noise_is_within_its_uncertainty() {
    // Synthetic data, truth chosen in the test: 2000 counts at the peak, σ = 0.25°,
    // step 0.1°, 5 counts background, counting noise (Gaussian with variance = counts),
    // threshold at the background.
    let (centre, sigma, height, background) = (-12.5, 0.25, 2000.0, 5.0);
    let mut est = Vec::new();
    let mut sig = Vec::new();
    for seed in 0..SEEDS {
        let mut rng = Rng::seeded(400 + seed);
        let s: Vec<Sample> = (0..31)
            .map(|i| {
                let a = centre - 1.5 + 0.1 * i as f64;
                let mean = gaussian(a, centre, sigma, height) + background;
                Sample {
                    angle_deg: a as f32,
                    current: (mean + mean.sqrt() * rng.normal()) as f32,
                }
            })
            .collect();
        let c = centroid(&s, background as f32).unwrap();
        est.push(c.angle_deg as f64);
        sig.push(c.uncertainty_deg as f64);
    }
    check_statistics("centroid (deg)", centre, &est, &sig);
}

#[test]
fn peak_centring_errors() {
    let s = |pairs: &[(f32, f32)]| -> Vec<Sample> {
        pairs
            .iter()
            .map(|&(a, c)| Sample {
                angle_deg: a,
                current: c,
            })
            .collect()
    };
    // Two points only.
    let two = s(&[(1.0, 2.0), (2.0, 3.0)]);
    assert_eq!(parabola_log(&two), Err(Error::TooFewPoints));
    assert_eq!(centroid(&two, 0.0), Err(Error::TooFewPoints));
    assert_eq!(parabola_log(&[]), Err(Error::TooFewPoints));
    assert_eq!(centroid(&[], 0.0), Err(Error::TooFewPoints));
    // Only two samples above the threshold.
    let peak = s(&[(1.0, 1.0), (2.0, 5.0), (3.0, 9.0), (4.0, 4.0), (5.0, 1.0)]);
    assert_eq!(centroid(&peak, 4.5), Err(Error::TooFewPoints));
    assert!(centroid(&peak, 0.5).is_ok());
    // Flat data.
    let flat = s(&[(1.0, 3.0), (2.0, 3.0), (3.0, 3.0), (4.0, 3.0)]);
    assert_eq!(parabola_log(&flat), Err(Error::DegenerateFit));
    assert_eq!(centroid(&flat, 0.0), Err(Error::DegenerateFit));
    // Maximum at the end of the scan: no peak inside.
    let rising = s(&[(1.0, 1.0), (2.0, 2.0), (3.0, 4.0), (4.0, 8.0)]);
    assert_eq!(parabola_log(&rising), Err(Error::DegenerateFit));
    assert_eq!(centroid(&rising, 0.0), Err(Error::DegenerateFit));
    // Non-positive currents are left out of the log fit: a neighbour at zero leaves
    // two points.
    let zero = s(&[(1.0, 0.0), (2.0, 5.0), (3.0, 3.0), (4.0, 0.5)]);
    assert_eq!(parabola_log(&zero), Err(Error::TooFewPoints));
    let negative = s(&[(1.0, -1.0), (2.0, -0.5), (3.0, -2.0)]);
    assert_eq!(parabola_log(&negative), Err(Error::TooFewPoints));
    // Exactly three points: centre found, no noise estimate.
    let three = s(&[(1.0, 1.0), (2.0, 4.0), (3.0, 2.0)]);
    let c = parabola_log(&three).unwrap();
    assert!(c.angle_deg > 1.0 && c.angle_deg < 3.0);
    assert_eq!(c.uncertainty_deg, f32::INFINITY);
    // NaN and infinity.
    let mut bad = peak.clone();
    bad[2].angle_deg = f32::NAN;
    assert_eq!(parabola_log(&bad), Err(Error::NotFinite(Quantity::Angle)));
    assert_eq!(centroid(&bad, 0.0), Err(Error::NotFinite(Quantity::Angle)));
    let mut bad = peak.clone();
    bad[1].current = f32::INFINITY;
    assert_eq!(parabola_log(&bad), Err(Error::NotFinite(Quantity::Count)));
    assert_eq!(centroid(&bad, 0.0), Err(Error::NotFinite(Quantity::Count)));
    assert_eq!(
        centroid(&peak, f32::NAN),
        Err(Error::NotFinite(Quantity::Count))
    );
    // Extreme but finite values do not overflow into nonsense.
    let huge = s(&[(1.0, 1e37), (2.0, 3e38), (3.0, 2e38), (4.0, 1e36)]);
    let c = centroid(&huge, -3e38).unwrap();
    assert!(c.angle_deg.is_finite() && c.uncertainty_deg.is_finite());
    assert!(parabola_log(&huge).unwrap().angle_deg.is_finite());
}

// ---------------------------------------------------------------------------------------
// Arm zero and gun energy offset.

/// The fit's model: in-plane exit of the first-order Cu(111) rod at normal incidence,
/// arm = asin(λ(E)/d), degrees (core f32 wavelength).
fn cu111_arm_deg(energy_ev: f32) -> matterwave_core::Result<f32> {
    let x = beam::wavelength_a(energy_ev)? / D_CU111_ROWS as f32;
    if x > 1.0 {
        return Err(Error::NoBraggAngle);
    }
    Ok(x.asin().to_degrees())
}

/// Synthetic truth for that model, f64.
fn cu111_arm_truth_deg(order: f64, energy_ev: f64) -> f64 {
    (order * lambda_a(energy_ev) / D_CU111_ROWS)
        .asin()
        .to_degrees()
}

// Synthetic data, truth chosen in the test.
const ARM_ZERO_DEG: f64 = 0.35;
const GUN_OFFSET_EV: f64 = -1.7;
const ARM_NOISE_DEG: f64 = 0.02;

fn nominal_energies() -> Vec<f64> {
    (0..14).map(|i| 40.0 + 20.0 * i as f64).collect()
}

#[test]
fn arm_zero_and_energy_offset_exact_data() {
    let pts: Vec<(f32, f32)> = nominal_energies()
        .iter()
        .map(|&e| {
            (
                e as f32,
                (cu111_arm_truth_deg(1.0, e + GUN_OFFSET_EV) + ARM_ZERO_DEG) as f32,
            )
        })
        .collect();
    let f = arm_zero_and_energy_offset(cu111_arm_deg, &pts).unwrap();
    assert!((f.params[0] as f64 - ARM_ZERO_DEG).abs() < 1e-3, "{f:?}");
    assert!((f.params[1] as f64 - GUN_OFFSET_EV).abs() < 5e-3, "{f:?}");
    assert!(f.rms_residual < 1e-4, "{f:?}");
    assert_eq!(f.points, 14);
    assert!(f.iterations >= 1 && f.iterations <= 10, "{f:?}");
}

#[test]
fn arm_zero_and_energy_offset_with_noise_is_within_its_uncertainty() {
    let mut zero = (Vec::new(), Vec::new());
    let mut offset = (Vec::new(), Vec::new());
    for seed in 0..SEEDS {
        let mut rng = Rng::seeded(1000 + seed);
        let pts: Vec<(f32, f32)> = nominal_energies()
            .iter()
            .map(|&e| {
                let arm = cu111_arm_truth_deg(1.0, e + GUN_OFFSET_EV)
                    + ARM_ZERO_DEG
                    + ARM_NOISE_DEG * rng.normal();
                (e as f32, arm as f32)
            })
            .collect();
        let f = arm_zero_and_energy_offset(cu111_arm_deg, &pts).unwrap();
        zero.0.push(f.params[0] as f64);
        zero.1.push(f.sigma[0] as f64);
        offset.0.push(f.params[1] as f64);
        offset.1.push(f.sigma[1] as f64);
        // The rms residual estimates the noise (12 degrees of freedom of 14 points).
        assert!(
            f.rms_residual > 0.3 * ARM_NOISE_DEG as f32
                && f.rms_residual < 2.0 * ARM_NOISE_DEG as f32
        );
    }
    check_statistics("arm zero (deg)", ARM_ZERO_DEG, &zero.0, &zero.1);
    check_statistics("gun offset (eV)", GUN_OFFSET_EV, &offset.0, &offset.1);
}

#[test]
fn arm_zero_and_energy_offset_from_two_orders() {
    // Orders 1 and 2 of the Cu(111) rows; order 2 exists above about 123 eV.
    let model = |order: usize, e: f32| -> matterwave_core::Result<f32> {
        let x = order as f32 * beam::wavelength_a(e)? / D_CU111_ROWS as f32;
        if x > 1.0 {
            return Err(Error::NoBraggAngle);
        }
        Ok(x.asin().to_degrees())
    };
    let mut est = (Vec::new(), Vec::new(), Vec::new(), Vec::new());
    for seed in 0..SEEDS {
        let mut rng = Rng::seeded(2000 + seed);
        let mut pts = Vec::new();
        for &e in nominal_energies().iter() {
            for order in [1usize, 2] {
                if order == 2 && e < 140.0 {
                    continue;
                }
                let arm = cu111_arm_truth_deg(order as f64, e + GUN_OFFSET_EV)
                    + ARM_ZERO_DEG
                    + ARM_NOISE_DEG * rng.normal();
                pts.push((order, e as f32, arm as f32));
            }
        }
        let f = arm_zero_and_energy_offset_multi(model, &pts).unwrap();
        est.0.push(f.params[0] as f64);
        est.1.push(f.sigma[0] as f64);
        est.2.push(f.params[1] as f64);
        est.3.push(f.sigma[1] as f64);
    }
    check_statistics("arm zero, two orders (deg)", ARM_ZERO_DEG, &est.0, &est.1);
    check_statistics("gun offset, two orders (eV)", GUN_OFFSET_EV, &est.2, &est.3);
}

#[test]
fn arm_zero_and_energy_offset_errors() {
    let two = [(50.0f32, 40.0f32), (100.0, 30.0)];
    assert_eq!(
        arm_zero_and_energy_offset(cu111_arm_deg, &two),
        Err(Error::TooFewPoints)
    );
    // All at one energy: the offsets cannot be told apart.
    let same = [
        (100.0f32, 33.0f32),
        (100.0, 33.1),
        (100.0, 32.9),
        (100.0, 33.0),
    ];
    assert_eq!(
        arm_zero_and_energy_offset(cu111_arm_deg, &same),
        Err(Error::DegenerateFit)
    );
    // A model error propagates: below about 30.7 eV the first-order beam has no angle.
    let low = [(25.0f32, 80.0f32), (60.0, 50.0), (100.0, 34.0)];
    assert_eq!(
        arm_zero_and_energy_offset(cu111_arm_deg, &low),
        Err(Error::NoBraggAngle)
    );
    let nan = [(f32::NAN, 40.0f32), (60.0, 50.0), (100.0, 34.0)];
    assert_eq!(
        arm_zero_and_energy_offset(cu111_arm_deg, &nan),
        Err(Error::NotFinite(Quantity::Energy))
    );
    let nan = [(50.0f32, f32::INFINITY), (60.0, 50.0), (100.0, 34.0)];
    assert_eq!(
        arm_zero_and_energy_offset(cu111_arm_deg, &nan),
        Err(Error::NotFinite(Quantity::Angle))
    );
    let ok = [(50.0f32, 40.0f32), (60.0, 50.0), (100.0, 34.0)];
    assert_eq!(
        arm_zero_and_energy_offset(|_| Ok(f32::NAN), &ok),
        Err(Error::NotFinite(Quantity::Angle))
    );
    assert_eq!(
        arm_zero_and_energy_offset(|_| Ok(1.0), &ok),
        Err(Error::DegenerateFit)
    );
}

// ---------------------------------------------------------------------------------------
// Row spacing.

#[test]
fn row_spacing_recovers_the_spacing_within_its_uncertainty() {
    // Synthetic data, truth Cu(100) rows (above); exit-angle noise 0.03°.
    let noise = 0.03;
    let make = |rng: &mut Option<Rng>| -> Vec<(f32, i32, f32)> {
        let mut pts = Vec::new();
        for e in nominal_energies() {
            for n in [1i32, -1, 2] {
                let x = n as f64 * lambda_a(e) / D_CU100_ROWS;
                if x.abs() > 0.95 {
                    continue;
                }
                let dn = rng.as_mut().map_or(0.0, |r| noise * r.normal());
                pts.push((e as f32, n, (x.asin().to_degrees() + dn) as f32));
            }
        }
        pts
    };
    let exact = row_spacing(&make(&mut None)).unwrap();
    assert!(
        (exact.value as f64 - D_CU100_ROWS).abs() < 2e-5,
        "{exact:?}"
    );
    assert!(exact.rms_residual < 1e-3, "{exact:?}");
    let mut est = Vec::new();
    let mut sig = Vec::new();
    for seed in 0..SEEDS {
        let f = row_spacing(&make(&mut Some(Rng::seeded(3000 + seed)))).unwrap();
        est.push(f.value as f64);
        sig.push(f.sigma as f64);
    }
    check_statistics("row spacing (Å)", D_CU100_ROWS, &est, &sig);
}

#[test]
fn row_spacing_errors() {
    assert_eq!(row_spacing(&[(100.0, 1, 30.0)]), Err(Error::TooFewPoints));
    assert_eq!(
        row_spacing(&[(100.0, 0, 0.0), (150.0, 0, 0.0)]),
        Err(Error::DegenerateFit)
    );
    assert_eq!(
        row_spacing(&[(100.0, 1, 30.0), (150.0, 1, f32::NAN)]),
        Err(Error::NotFinite(Quantity::Angle))
    );
    assert_eq!(
        row_spacing(&[(100.0, 1, 30.0), (f32::NAN, 1, 20.0)]),
        Err(Error::NotFinite(Quantity::Energy))
    );
    assert_eq!(
        row_spacing(&[(100.0, 1, 30.0), (150.0, 1, 90.0)]),
        Err(Error::TooHigh(Quantity::Angle))
    );
    assert_eq!(
        row_spacing(&[(100.0, 1, 30.0), (150.0, 1000, 20.0)]),
        Err(Error::TooHigh(Quantity::Index))
    );
    // An exit angle of 3e-35° fits d ≈ 1e36 Å; σ(d) = σ(1/d)·d² underflowed through
    // (1/d)² to 0/0 = NaN (found by `fits_never_panic`).
    let f = row_spacing(&[(552.4433, 1, 2.873_717_2e-35), (207.32106, 0, 0.0)]);
    assert!(f.is_ok_and(|f| f.value > 1e35 && f.sigma >= 0.0), "{f:?}");
    // Beyond f32 altogether: no fit.
    assert_eq!(
        row_spacing(&[(552.4433, 1, 1e-44), (207.32106, 0, 0.0)]),
        Err(Error::DegenerateFit)
    );
}

// ---------------------------------------------------------------------------------------
// Inner potential and layer spacing.

// Synthetic data, truth chosen in the test (a typical metal inner potential).
const V0_EV: f64 = 11.0;

/// Kinematic specular peak energy outside, eV: relativistic E for λ_in = 2d/n, minus V0.
fn iv_peak_ev(order: i32, d: f64, v0: f64) -> f64 {
    let pc = HC * order as f64 / (2.0 * d);
    (pc * pc + MC2 * MC2).sqrt() - MC2 - v0
}

#[test]
fn inner_potential_and_spacing_exact_data() {
    let pts: Vec<(i32, f32)> = (2..=7)
        .map(|n| (n, iv_peak_ev(n, D_NI100, V0_EV) as f32))
        .collect();
    let f = inner_potential_and_spacing(&pts).unwrap();
    assert!((f.inner_potential_ev as f64 - V0_EV).abs() < 0.02, "{f:?}");
    assert!((f.layer_spacing_a as f64 - D_NI100).abs() < 5e-5, "{f:?}");
    assert!(f.rms_residual_ev < 5e-3, "{f:?}");
    assert_eq!(f.points, 6);
}

#[test]
fn inner_potential_and_spacing_with_noise_is_within_its_uncertainty() {
    // Orders 2–7, each peak read off two I-V curves, 0.5 eV noise per reading.
    let noise = 0.5;
    let mut v = (Vec::new(), Vec::new());
    let mut d = (Vec::new(), Vec::new());
    for seed in 0..SEEDS {
        let mut rng = Rng::seeded(4000 + seed);
        let mut pts = Vec::new();
        for _ in 0..2 {
            for n in 2..=7 {
                pts.push((
                    n,
                    (iv_peak_ev(n, D_NI100, V0_EV) + noise * rng.normal()) as f32,
                ));
            }
        }
        let f = inner_potential_and_spacing(&pts).unwrap();
        v.0.push(f.inner_potential_ev as f64);
        v.1.push(f.inner_potential_sigma_ev as f64);
        d.0.push(f.layer_spacing_a as f64);
        d.1.push(f.layer_spacing_sigma_a as f64);
    }
    check_statistics("inner potential (eV)", V0_EV, &v.0, &v.1);
    check_statistics("layer spacing (Å)", D_NI100, &d.0, &d.1);
}

#[test]
fn inner_potential_and_spacing_errors() {
    assert_eq!(
        inner_potential_and_spacing(&[(2, 40.0), (3, 90.0)]),
        Err(Error::TooFewPoints)
    );
    assert_eq!(
        inner_potential_and_spacing(&[(3, 90.0), (3, 91.0), (3, 89.0)]),
        Err(Error::DegenerateFit)
    );
    assert_eq!(
        inner_potential_and_spacing(&[(0, 5.0), (2, 40.0), (3, 90.0)]),
        Err(Error::TooLow(Quantity::Index))
    );
    assert_eq!(
        inner_potential_and_spacing(&[(2, f32::NAN), (3, 90.0), (4, 160.0)]),
        Err(Error::NotFinite(Quantity::Energy))
    );
    assert_eq!(
        inner_potential_and_spacing(&[(2, 160.0), (3, 90.0), (4, 40.0)]),
        Err(Error::DegenerateFit)
    );
}

// ---------------------------------------------------------------------------------------
// Mostly valid input: perturbed true models, a fraction corrupted. Every fit must
// accept most of it and give results with real properties; nothing may panic or return
// NaN on the rest. Deterministic (fixed seeds): the counts below reproduce.

/// Cases per fit.
const INPUT_CASES: u32 = 2_000;

/// A value that breaks an input check or strains the arithmetic: NaN, infinities,
/// zero, negatives, huge and tiny numbers.
fn wild(rng: &mut Rng) -> f32 {
    rng.select(&[
        f32::NAN,
        f32::INFINITY,
        f32::NEG_INFINITY,
        0.0,
        -1.0,
        -1e3,
        1e30,
        -1e30,
        3e-35,
        f32::MAX,
        f32::MIN_POSITIVE,
    ])
}

/// Replaces one value of `v` by a wild one with probability `p`.
fn corrupt(rng: &mut Rng, p: f64, v: &mut [f32]) -> bool {
    if v.is_empty() || !rng.chance(p) {
        return false;
    }
    let i = rng.int(0, v.len() as i32 - 1) as usize;
    v[i] = wild(rng);
    true
}

/// Accepted / all, with the minimum fraction asserted.
fn report_accepted(what: &str, ok: u32, cases: u32, min: f64) {
    println!("{what}: {ok} of {cases} cases accepted");
    assert!(
        ok as f64 >= min * cases as f64,
        "{what}: only {ok} of {cases} cases accepted (want ≥ {:.0} %)",
        100.0 * min
    );
}

#[test]
fn peak_centring_on_mostly_valid_scans() {
    let mut rng = Rng::seeded(0xf17_0001);
    let (mut ok_c, mut ok_p) = (0, 0);
    for case in 0..INPUT_CASES {
        // A Gaussian on a background, sampled on a grid, with noise; sometimes a wild value.
        let n = rng.int(0, 40) as usize;
        let (start, step) = (rng.range(-60.0, 60.0), rng.range(0.02, 0.5));
        let width = rng.range(0.5, 5.0) * step;
        let centre = start + step * n as f64 * rng.range(0.2, 0.8);
        let (height, bg) = (rng.range(1.0, 1e4), rng.range(0.0, 50.0));
        let noise = rng.range(0.0, 0.05) * height;
        let mut s: Vec<Sample> = (0..n)
            .map(|i| {
                let a = start + step * i as f64;
                Sample {
                    angle_deg: a as f32,
                    current: (gaussian(a, centre, width, height) + bg + noise * rng.normal())
                        as f32,
                }
            })
            .collect();
        let mut flat: Vec<f32> = s.iter().flat_map(|p| [p.angle_deg, p.current]).collect();
        let wild_in = corrupt(&mut rng, 0.2, &mut flat);
        for (p, v) in s.iter_mut().zip(flat.chunks(2)) {
            p.angle_deg = v[0];
            p.current = v[1];
        }
        let threshold = if rng.chance(0.1) {
            wild(&mut rng)
        } else {
            bg as f32
        };
        let lo = s.iter().map(|p| p.angle_deg).fold(f32::INFINITY, f32::min);
        let hi = s
            .iter()
            .map(|p| p.angle_deg)
            .fold(f32::NEG_INFINITY, f32::max);
        let what = format!("case {case}: {s:?} threshold {threshold}");
        // Clean data with the peak well inside the scan (3 widths from either end).
        let inside = n > 0
            && centre - 3.0 * width > start
            && centre + 3.0 * width < start + step * (n - 1) as f64;
        let clean = !wild_in && noise < 0.01 * height && width > step && inside;
        for (r, ok, close) in [
            (
                centroid(&s, threshold),
                &mut ok_c,
                clean && threshold == bg as f32,
            ),
            (parabola_log(&s), &mut ok_p, clean),
        ] {
            if let Ok(c) = r {
                *ok += 1;
                // The centre lies inside the sampled range; widths and σ are ≥ 0.
                assert!(c.angle_deg >= lo && c.angle_deg <= hi, "{c:?}: {what}");
                assert!(c.uncertainty_deg >= 0.0, "{c:?}: {what}");
                assert!(c.fwhm_deg >= 0.0, "{c:?}: {what}");
                assert!(!c.peak_current.is_nan(), "{c:?}: {what}");
                assert!(
                    c.points_used >= 3 && c.points_used as usize <= s.len(),
                    "{c:?}"
                );
                // Clean, well-sampled data: the true centre within a step.
                if close {
                    assert!((c.angle_deg as f64 - centre).abs() <= step, "{c:?}: {what}");
                }
            }
        }
    }
    report_accepted("centroid", ok_c, INPUT_CASES, 0.3);
    report_accepted("parabola_log", ok_p, INPUT_CASES, 0.3);
}

#[test]
fn calibration_fits_on_mostly_valid_input() {
    let mut rng = Rng::seeded(0xf17_0002);
    let (mut ok_arm, mut ok_rows, mut ok_iv) = (0, 0, 0);
    for case in 0..INPUT_CASES {
        // Arm zero and gun offset: the Cu(111) model with a random truth.
        let (zero, offset) = (rng.range(-2.0, 2.0), rng.range(-5.0, 5.0));
        let noise = if rng.chance(0.3) {
            0.0
        } else {
            rng.range(0.0, 0.05)
        };
        let n = rng.int(0, 12) as usize;
        let mut flat: Vec<f32> = (0..n)
            .flat_map(|_| {
                let e = rng.range(40.0, 600.0);
                let arm = cu111_arm_truth_deg(1.0, e + offset) + zero + noise * rng.normal();
                [e as f32, arm as f32]
            })
            .collect();
        let wild_in = corrupt(&mut rng, 0.2, &mut flat);
        let arm: Vec<(f32, f32)> = flat.chunks(2).map(|v| (v[0], v[1])).collect();
        if let Ok(f) = arm_zero_and_energy_offset(cu111_arm_deg, &arm) {
            ok_arm += 1;
            assert!(f.params.iter().all(|v| v.is_finite()), "case {case}: {f:?}");
            assert!(f.sigma.iter().all(|s| *s >= 0.0), "case {case}: {f:?}");
            assert!(f.rms_residual >= 0.0, "case {case}: {f:?}");
            if !wild_in && noise == 0.0 && n >= 4 {
                assert!(
                    (f.params[0] as f64 - zero).abs() < 2e-3,
                    "case {case}: {f:?}"
                );
                assert!(
                    (f.params[1] as f64 - offset).abs() < 2e-2,
                    "case {case}: {f:?}"
                );
            }
        }

        // Row spacing: exit angles of orders ±1..±3 of a random d.
        let d = rng.range(1.5, 6.0);
        let noise = if rng.chance(0.3) {
            0.0
        } else {
            rng.range(0.0, 0.05)
        };
        let n = rng.int(0, 12) as usize;
        let mut rows: Vec<(f32, i32, f32)> = Vec::new();
        while rows.len() < n {
            let order = rng.int(-3, 3);
            let e = rng.range(20.0, 1000.0);
            let x = order as f64 * lambda_a(e) / d;
            if x.abs() < 0.95 {
                let exit = x.asin().to_degrees() + noise * rng.normal();
                rows.push((e as f32, order, exit as f32));
            }
        }
        let mut flat: Vec<f32> = rows.iter().flat_map(|r| [r.0, r.2]).collect();
        let wild_in = corrupt(&mut rng, 0.2, &mut flat);
        for (r, v) in rows.iter_mut().zip(flat.chunks(2)) {
            r.0 = v[0];
            r.2 = v[1];
        }
        if let Ok(f) = row_spacing(&rows) {
            ok_rows += 1;
            assert!(
                f.value > 0.0 && f.value.is_finite(),
                "case {case}: {f:?} {rows:?}"
            );
            assert!(f.sigma >= 0.0, "case {case}: {f:?} {rows:?}");
            assert!(f.rms_residual >= 0.0, "case {case}: {f:?}");
            if !wild_in && noise == 0.0 {
                assert!(
                    (f.value as f64 / d - 1.0).abs() < 1e-4,
                    "case {case}: {f:?} {d}"
                );
            }
        }

        // Inner potential and layer spacing: specular peaks of a random (V0, d).
        let (v0, d) = (rng.range(0.0, 20.0), rng.range(1.0, 3.0));
        let noise = if rng.chance(0.3) {
            0.0
        } else {
            rng.range(0.0, 1.0)
        };
        let n = rng.int(0, 10) as usize;
        let mut orders: Vec<i32> = (0..n).map(|_| rng.int(1, 9)).collect();
        orders.sort();
        let mut flat: Vec<f32> = orders
            .iter()
            .map(|&m| (iv_peak_ev(m, d, v0) + noise * rng.normal()) as f32)
            .collect();
        let wild_in = corrupt(&mut rng, 0.2, &mut flat);
        let iv: Vec<(i32, f32)> = orders.iter().copied().zip(flat).collect();
        if let Ok(f) = inner_potential_and_spacing(&iv) {
            ok_iv += 1;
            assert!(f.layer_spacing_a > 0.0, "case {case}: {f:?} {iv:?}");
            assert!(
                f.inner_potential_ev.is_finite(),
                "case {case}: {f:?} {iv:?}"
            );
            assert!(
                f.inner_potential_sigma_ev >= 0.0 && f.layer_spacing_sigma_a >= 0.0,
                "case {case}: {f:?}"
            );
            let distinct = iv.windows(2).filter(|w| w[0].0 != w[1].0).count() >= 2;
            if !wild_in && noise == 0.0 && distinct {
                assert!(
                    (f.inner_potential_ev as f64 - v0).abs() < 0.05,
                    "case {case}: {f:?}"
                );
                assert!(
                    (f.layer_spacing_a as f64 / d - 1.0).abs() < 1e-3,
                    "case {case}: {f:?}"
                );
            }
        }
    }
    report_accepted("arm zero and gun offset", ok_arm, INPUT_CASES, 0.3);
    report_accepted("row spacing", ok_rows, INPUT_CASES, 0.3);
    report_accepted("inner potential and spacing", ok_iv, INPUT_CASES, 0.3);
}

// ---------------------------------------------------------------------------------------
// No panics, no NaN results, on arbitrary input (any f32, orders of any sign): most of
// it fails the input checks; what passes must not be NaN.

mod arbitrary_input {
    use super::*;
    use proptest::prelude::*;

    fn any_f32() -> impl Strategy<Value = f32> {
        prop_oneof![
            4 => -1e3f32..1e3,
            1 => proptest::num::f32::ANY,
            1 => Just(0.0f32),
        ]
    }

    fn no_nan(c: &PeakCentre) -> bool {
        !(c.angle_deg.is_nan()
            || c.uncertainty_deg.is_nan()
            || c.peak_current.is_nan()
            || c.fwhm_deg.is_nan())
    }

    proptest! {
        #[test]
        fn peak_centring_never_panics(
            pts in proptest::collection::vec((any_f32(), any_f32()), 0..40),
            threshold in any_f32(),
        ) {
            let s: Vec<Sample> = pts
                .iter()
                .map(|&(a, c)| Sample { angle_deg: a, current: c })
                .collect();
            if let Ok(c) = centroid(&s, threshold) {
                prop_assert!(no_nan(&c), "{c:?}");
            }
            if let Ok(c) = parabola_log(&s) {
                prop_assert!(no_nan(&c), "{c:?}");
            }
        }

        #[test]
        fn fits_never_panic(
            arm in proptest::collection::vec((any_f32(), any_f32()), 0..12),
            rows in proptest::collection::vec((any_f32(), -3i32..4, any_f32()), 0..12),
            iv in proptest::collection::vec((-2i32..12, any_f32()), 0..12),
        ) {
            if let Ok(f) = arm_zero_and_energy_offset(cu111_arm_deg, &arm) {
                prop_assert!(f.params.iter().chain(&f.sigma).all(|v| !v.is_nan()), "{f:?}");
            }
            if let Ok(f) = row_spacing(&rows) {
                prop_assert!(!f.value.is_nan() && !f.sigma.is_nan(), "{f:?}");
            }
            if let Ok(f) = inner_potential_and_spacing(&iv) {
                prop_assert!(!f.inner_potential_ev.is_nan() && !f.layer_spacing_a.is_nan(), "{f:?}");
            }
        }
    }
}

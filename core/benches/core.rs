//! Criterion benchmarks of the core's hot paths (host figures; the Cortex-M4F
//! instruction counts come from the firmware report).
//!
//! Run: `cargo bench -p matterwave-core`.

use criterion::{criterion_group, criterion_main, Criterion};
use matterwave_core::beam;
use matterwave_core::lattice::{Cell, Structure};
use matterwave_core::reflections::{families, Reflection};
use matterwave_core::surface::{Face, Incidence, IvPeak, SurfaceBeam};
use std::hint::black_box;

fn bench(c: &mut Criterion) {
    c.bench_function("wavelength_a(150 eV)", |b| {
        b.iter(|| beam::wavelength_a(black_box(150.0)))
    });
    let cu = Cell::new(Structure::Fcc, 3.615, 0.0, 0.0).unwrap();
    let f111 = Face::new(&cu, [1, 1, 1]).unwrap();
    let inc = Incidence::normal(200.0).unwrap();
    let mut out = [SurfaceBeam::EMPTY; 32];
    c.bench_function("beams fcc(111) 200 eV, sorted list", |b| {
        b.iter(|| f111.beams(black_box(&inc), &mut out).map(|l| l.stored))
    });
    c.bench_function("beams fcc(111) 200 eV, iterator", |b| {
        b.iter(|| f111.beams_iter(black_box(&inc)).count())
    });
    c.bench_function("Face::new fcc(111)", |b| {
        b.iter(|| Face::new(black_box(&cu), [1, 1, 1]))
    });
    let mut peaks = [IvPeak::EMPTY; 32];
    let tilted = Incidence::new(200.0, 10.0, 0.0).unwrap();
    c.bench_function("iv_peaks fcc(111) (1,0) 20-500 eV, tilt 10", |b| {
        b.iter(|| f111.iv_peaks([1, 0], black_box(&tilted), 10.0, 20.0, 500.0, &mut peaks))
    });
    let mut fams = [Reflection::EMPTY; 20];
    c.bench_function("20 reflection families fcc", |b| {
        b.iter(|| families(black_box(&cu), 0.01, &mut fams))
    });
}

criterion_group!(benches, bench);
criterion_main!(benches);

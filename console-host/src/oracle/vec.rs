//! The small f64 3-vector and rotation toolkit the oracle is built on, and bisection.

pub(super) type V3 = [f64; 3];
pub(super) type M3 = [[f64; 3]; 3];

pub(super) fn add(a: V3, b: V3) -> V3 {
    [a[0] + b[0], a[1] + b[1], a[2] + b[2]]
}
pub(super) fn sub(a: V3, b: V3) -> V3 {
    [a[0] - b[0], a[1] - b[1], a[2] - b[2]]
}
pub(super) fn scale(s: f64, a: V3) -> V3 {
    [s * a[0], s * a[1], s * a[2]]
}
pub(super) fn dot(a: V3, b: V3) -> f64 {
    a[0] * b[0] + a[1] * b[1] + a[2] * b[2]
}
pub(super) fn cross(a: V3, b: V3) -> V3 {
    [
        a[1] * b[2] - a[2] * b[1],
        a[2] * b[0] - a[0] * b[2],
        a[0] * b[1] - a[1] * b[0],
    ]
}
pub(super) fn norm(a: V3) -> f64 {
    dot(a, a).sqrt()
}
pub(super) fn unit(a: V3) -> V3 {
    scale(1.0 / norm(a), a)
}
pub(super) fn mat_vec(m: &M3, v: V3) -> V3 {
    [dot(m[0], v), dot(m[1], v), dot(m[2], v)]
}
pub(super) fn mat_mul(a: &M3, b: &M3) -> M3 {
    let mut out = [[0.0; 3]; 3];
    for (r, row) in out.iter_mut().enumerate() {
        for (c, cell) in row.iter_mut().enumerate() {
            *cell = (0..3).map(|i| a[r][i] * b[i][c]).sum();
        }
    }
    out
}
/// Rotation by `deg` about +z (counter-clockwise seen from +z).
pub(super) fn rot_z(deg: f64) -> M3 {
    let (s, c) = deg.to_radians().sin_cos();
    [[c, -s, 0.0], [s, c, 0.0], [0.0, 0.0, 1.0]]
}
/// Rotation by `deg` about the unit axis `u` (right-hand rule; Rodrigues' formula).
pub(super) fn rot_axis(u: V3, deg: f64) -> M3 {
    let (s, c) = deg.to_radians().sin_cos();
    let t = 1.0 - c;
    let [x, y, z] = u;
    [
        [c + x * x * t, x * y * t - z * s, x * z * t + y * s],
        [y * x * t + z * s, c + y * y * t, y * z * t - x * s],
        [z * x * t - y * s, z * y * t + x * s, c + z * z * t],
    ]
}
/// The rotation taking the orthonormal triad `from[i]` onto `to[i]` (i = 0, 1, 2):
/// R = Σ to_i ⊗ from_i.
pub(super) fn frame_map(from: [V3; 3], to: [V3; 3]) -> M3 {
    let mut m = [[0.0; 3]; 3];
    for i in 0..3 {
        for (r, row) in m.iter_mut().enumerate() {
            for (c, cell) in row.iter_mut().enumerate() {
                *cell += to[i][r] * from[i][c];
            }
        }
    }
    m
}

/// Bisection for a sign change of `f` between `lo` and `hi` (f(lo) and f(hi) of
/// opposite sign, or one of them zero). Runs until the bracket cannot shrink further.
pub(super) fn bisect(mut lo: f64, mut hi: f64, f: impl Fn(f64) -> f64, geometric: bool) -> f64 {
    let f_lo = f(lo);
    if f_lo == 0.0 {
        return lo;
    }
    let lo_positive = f_lo > 0.0;
    for _ in 0..2000 {
        let mid = if geometric {
            (lo * hi).sqrt()
        } else {
            0.5 * (lo + hi)
        };
        if mid <= lo || mid >= hi {
            break;
        }
        let fm = f(mid);
        if fm == 0.0 {
            return mid;
        }
        if (fm > 0.0) == lo_positive {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    0.5 * (lo + hi)
}

//! Convolution of a raster with a kernel stencil: a small iterative radix-2
//! FFT (Cooley & Tukey 1965, Math. Comp. 19:297–301) for general stencils,
//! and direct separable passes for product kernels (the Gaussian).
//!
//! All convolutions here are *linear* ("same" size output, zero outside the
//! raster): the FFT is padded to at least `n + r + 1` per axis so circular
//! wrap-around never reaches the output.

/// A kernel sampled on the grid offsets `−r..=r` in each axis.
#[derive(Debug, Clone)]
pub(crate) enum Stencil {
    /// `w[dx + r] · w[dy + r]` (a product kernel).
    Separable { r: usize, w: Vec<f64> },
    /// Row-major `(2r+1)²` weights, index `(dy + r)(2r+1) + dx + r`.
    Full { r: usize, w: Vec<f64> },
}

impl Stencil {
    pub(crate) fn radius(&self) -> usize {
        match self {
            Stencil::Separable { r, .. } | Stencil::Full { r, .. } => *r,
        }
    }
    /// Weight at offset `(dx, dy)` cells (0 outside the stencil).
    pub(crate) fn at(&self, dx: isize, dy: isize) -> f64 {
        let r = self.radius() as isize;
        if dx.abs() > r || dy.abs() > r {
            return 0.0;
        }
        let (a, b) = ((dx + r) as usize, (dy + r) as usize);
        match self {
            Stencil::Separable { w, .. } => w[a] * w[b],
            Stencil::Full { r, w } => w[b * (2 * r + 1) + a],
        }
    }
    fn full_weights(&self) -> Vec<f64> {
        match self {
            Stencil::Full { w, .. } => w.clone(),
            Stencil::Separable { r, w } => {
                let m = 2 * r + 1;
                let mut out = vec![0.0; m * m];
                for b in 0..m {
                    for a in 0..m {
                        out[b * m + a] = w[a] * w[b];
                    }
                }
                out
            }
        }
    }
}

/// Separable stencils up to this radius use direct passes; larger ones FFT.
const DIRECT_SEPARABLE_MAX_R: usize = 64;

/// `out(i, j) = Σ_{p,q} data(p, q) · K(i − p, j − q)` for a row-major
/// `nx × ny` raster, zero outside it.
pub(crate) fn convolve(data: &[f64], nx: usize, ny: usize, k: &Stencil) -> Vec<f64> {
    match k {
        Stencil::Separable { r, w } if *r <= DIRECT_SEPARABLE_MAX_R => {
            separable(data, nx, ny, *r, w)
        }
        _ => convolve_fft(data, nx, ny, k.radius(), &k.full_weights()),
    }
}

fn separable(data: &[f64], nx: usize, ny: usize, r: usize, w: &[f64]) -> Vec<f64> {
    let ri = r as isize;
    let mut tmp = vec![0.0; nx * ny];
    // Along x: scatter each nonzero input so sparse rasters (binned points,
    // masks) cost little.
    for j in 0..ny {
        let row = &data[j * nx..(j + 1) * nx];
        let out = &mut tmp[j * nx..(j + 1) * nx];
        for (p, &v) in row.iter().enumerate() {
            if v == 0.0 {
                continue;
            }
            let lo = (p as isize - ri).max(0) as usize;
            let hi = ((p as isize + ri) as usize).min(nx - 1);
            for (i, o) in out.iter_mut().enumerate().take(hi + 1).skip(lo) {
                *o += v * w[(i as isize - p as isize + ri) as usize];
            }
        }
    }
    // Along y: whole rows at a time (contiguous).
    let mut out = vec![0.0; nx * ny];
    for q in 0..ny {
        let src = &tmp[q * nx..(q + 1) * nx];
        if src.iter().all(|&v| v == 0.0) {
            continue;
        }
        let lo = (q as isize - ri).max(0) as usize;
        let hi = ((q as isize + ri) as usize).min(ny - 1);
        for j in lo..=hi {
            let wt = w[(j as isize - q as isize + ri) as usize];
            let dst = &mut out[j * nx..(j + 1) * nx];
            for (d, s) in dst.iter_mut().zip(src) {
                *d += wt * s;
            }
        }
    }
    out
}

fn convolve_fft(data: &[f64], nx: usize, ny: usize, r: usize, kw: &[f64]) -> Vec<f64> {
    let px = (nx + r + 1).next_power_of_two();
    let py = (ny + r + 1).next_power_of_two();
    let m = 2 * r + 1;
    let mut are = vec![0.0; px * py];
    let mut aim = vec![0.0; px * py];
    for j in 0..ny {
        are[j * px..j * px + nx].copy_from_slice(&data[j * nx..(j + 1) * nx]);
    }
    let mut kre = vec![0.0; px * py];
    let mut kim = vec![0.0; px * py];
    for b in 0..m {
        for a in 0..m {
            let dx = a as isize - r as isize;
            let dy = b as isize - r as isize;
            let x = dx.rem_euclid(px as isize) as usize;
            let y = dy.rem_euclid(py as isize) as usize;
            kre[y * px + x] += kw[b * m + a];
        }
    }
    fft2(&mut are, &mut aim, px, py, false);
    fft2(&mut kre, &mut kim, px, py, false);
    for k in 0..px * py {
        let (a, b, c, d) = (are[k], aim[k], kre[k], kim[k]);
        are[k] = a * c - b * d;
        aim[k] = a * d + b * c;
    }
    fft2(&mut are, &mut aim, px, py, true);
    let scale = 1.0 / (px * py) as f64;
    let mut out = vec![0.0; nx * ny];
    for j in 0..ny {
        for i in 0..nx {
            out[j * nx + i] = are[j * px + i] * scale;
        }
    }
    out
}

/// Set covariance of a 0/1 raster: `γ(a, b) = Σ_{p,q} m(p, q)·m(p + a, q + b)`
/// (in cells), by FFT. Returned with lags wrapped: lag `(a, b)` is at
/// `(a mod px) + (b mod py)·px`; `px ≥ 2nx`, `py ≥ 2ny` so nothing aliases.
pub(crate) fn autocorrelation(mask: &[bool], nx: usize, ny: usize) -> (Vec<f64>, usize, usize) {
    let v: Vec<f64> = mask.iter().map(|&b| if b { 1.0 } else { 0.0 }).collect();
    autocorrelation_of(&v, nx, ny)
}

/// [`autocorrelation`] of a real raster.
pub(crate) fn autocorrelation_of(v: &[f64], nx: usize, ny: usize) -> (Vec<f64>, usize, usize) {
    autocorrelation_within(v, nx, ny, nx, ny)
}

/// [`autocorrelation_of`] needed only at lags |a| ≤ `lx`, |b| ≤ `ly`: the
/// FFT is padded to `px = (nx + lx).next_power_of_two()` (likewise py),
/// the least size at which no lag in that range aliases with another lag
/// of the raster (lags outside it may). `lx = nx`, `ly = ny` gives every
/// lag.
pub(crate) fn autocorrelation_within(
    v: &[f64],
    nx: usize,
    ny: usize,
    lx: usize,
    ly: usize,
) -> (Vec<f64>, usize, usize) {
    let px = (nx + lx.min(nx)).max(1).next_power_of_two();
    let py = (ny + ly.min(ny)).max(1).next_power_of_two();
    let mut re = vec![0.0; px * py];
    let mut im = vec![0.0; px * py];
    for j in 0..ny {
        re[j * px..j * px + nx].copy_from_slice(&v[j * nx..(j + 1) * nx]);
    }
    fft2(&mut re, &mut im, px, py, false);
    for k in 0..px * py {
        re[k] = re[k] * re[k] + im[k] * im[k];
        im[k] = 0.0;
    }
    fft2(&mut re, &mut im, px, py, true);
    let scale = 1.0 / (px * py) as f64;
    for v in &mut re {
        *v = (*v * scale).max(0.0);
    }
    (re, px, py)
}

/// [`autocorrelation_within`] of two real rasters of the same size at the
/// cost of one: `a` goes in the real part and `b` in the imaginary part of
/// one forward FFT Z; their transforms are A(k) = (Z(k) + conj Z(−k))/2 and
/// B(k) = (Z(k) − conj Z(−k))/(2i), and one inverse FFT of |A|² + i·|B|²
/// gives both autocorrelations (real and imaginary parts), since both are
/// real.
pub(crate) fn autocorrelation_pair_within(
    a: &[f64],
    b: &[f64],
    nx: usize,
    ny: usize,
    lx: usize,
    ly: usize,
) -> (Vec<f64>, Vec<f64>, usize, usize) {
    let px = (nx + lx.min(nx)).max(1).next_power_of_two();
    let py = (ny + ly.min(ny)).max(1).next_power_of_two();
    let mut re = vec![0.0; px * py];
    let mut im = vec![0.0; px * py];
    for j in 0..ny {
        re[j * px..j * px + nx].copy_from_slice(&a[j * nx..(j + 1) * nx]);
        im[j * px..j * px + nx].copy_from_slice(&b[j * nx..(j + 1) * nx]);
    }
    fft2(&mut re, &mut im, px, py, false);
    let mut pa = vec![0.0; px * py];
    let mut pb = vec![0.0; px * py];
    for ky in 0..py {
        let my = (py - ky) % py;
        for kx in 0..px {
            let mx = (px - kx) % px;
            let (zr, zi) = (re[ky * px + kx], im[ky * px + kx]);
            let (wr, wi) = (re[my * px + mx], im[my * px + mx]);
            pa[ky * px + kx] = 0.25 * ((zr + wr) * (zr + wr) + (zi - wi) * (zi - wi));
            pb[ky * px + kx] = 0.25 * ((zr - wr) * (zr - wr) + (zi + wi) * (zi + wi));
        }
    }
    drop((re, im));
    fft2(&mut pa, &mut pb, px, py, true);
    let scale = 1.0 / (px * py) as f64;
    for v in pa.iter_mut().chain(pb.iter_mut()) {
        *v = (*v * scale).max(0.0);
    }
    (pa, pb, px, py)
}

/// In-place 2-D FFT (unscaled; `inverse` flips the sign of the exponent):
/// row transforms, a blocked transpose, row transforms again, transpose back
/// (strided column access would thrash the cache at power-of-two strides).
fn fft2(re: &mut [f64], im: &mut [f64], px: usize, py: usize, inverse: bool) {
    let tw = Twiddles::new(px.max(py), inverse);
    let rows = |re: &mut [f64], im: &mut [f64], len: usize| {
        for (r, i) in re.chunks_exact_mut(len).zip(im.chunks_exact_mut(len)) {
            fft1(r, i, &tw);
        }
    };
    rows(re, im, px);
    let mut tre = vec![0.0; px * py];
    let mut tim = vec![0.0; px * py];
    transpose(re, &mut tre, px, py);
    transpose(im, &mut tim, px, py);
    rows(&mut tre, &mut tim, py);
    transpose(&tre, re, py, px);
    transpose(&tim, im, py, px);
}

/// `dst[i·rows + j] = src[j·cols + i]` for a `rows × cols` row-major `src`.
fn transpose(src: &[f64], dst: &mut [f64], cols: usize, rows: usize) {
    const B: usize = 32;
    for j0 in (0..rows).step_by(B) {
        for i0 in (0..cols).step_by(B) {
            for j in j0..(j0 + B).min(rows) {
                for i in i0..(i0 + B).min(cols) {
                    dst[i * rows + j] = src[j * cols + i];
                }
            }
        }
    }
}

struct Twiddles {
    n: usize,
    cos: Vec<f64>,
    sin: Vec<f64>,
}

impl Twiddles {
    fn new(n: usize, inverse: bool) -> Twiddles {
        let sign = if inverse { 1.0 } else { -1.0 };
        let (cos, sin) = (0..n / 2)
            .map(|k| {
                let a = sign * 2.0 * std::f64::consts::PI * k as f64 / n as f64;
                (a.cos(), a.sin())
            })
            .unzip();
        Twiddles { n, cos, sin }
    }
}

/// Iterative radix-2 decimation-in-time FFT of length `re.len()` (a power
/// of two no larger than the twiddle table's length).
fn fft1(re: &mut [f64], im: &mut [f64], tw: &Twiddles) {
    let n = re.len();
    if n <= 1 {
        return;
    }
    // Bit reversal.
    let mut j = 0;
    for i in 1..n {
        let mut bit = n >> 1;
        while j & bit != 0 {
            j ^= bit;
            bit >>= 1;
        }
        j |= bit;
        if i < j {
            re.swap(i, j);
            im.swap(i, j);
        }
    }
    let mut len = 2;
    while len <= n {
        let step = tw.n / len;
        let half = len / 2;
        for s in (0..n).step_by(len) {
            for k in 0..half {
                let (c, si) = (tw.cos[k * step], tw.sin[k * step]);
                let (a, b) = (s + k, s + k + half);
                let xr = re[b] * c - im[b] * si;
                let xi = re[b] * si + im[b] * c;
                re[b] = re[a] - xr;
                im[b] = im[a] - xi;
                re[a] += xr;
                im[a] += xi;
            }
        }
        len <<= 1;
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn direct(data: &[f64], nx: usize, ny: usize, r: usize, kw: &[f64]) -> Vec<f64> {
        let m = 2 * r + 1;
        let mut out = vec![0.0; nx * ny];
        for j in 0..ny {
            for i in 0..nx {
                let mut s = 0.0;
                for b in 0..m {
                    for a in 0..m {
                        let p = i as isize - (a as isize - r as isize);
                        let q = j as isize - (b as isize - r as isize);
                        if p >= 0 && q >= 0 && (p as usize) < nx && (q as usize) < ny {
                            s += data[q as usize * nx + p as usize] * kw[b * m + a];
                        }
                    }
                }
                out[j * nx + i] = s;
            }
        }
        out
    }

    /// Two autocorrelations from one FFT pair equal the one-at-a-time ones.
    #[test]
    fn paired_autocorrelations_match_single_ones() {
        let (nx, ny) = (13, 7);
        let a: Vec<f64> = (0..nx * ny).map(|k| ((k * 37) % 11) as f64).collect();
        let b: Vec<f64> = (0..nx * ny).map(|k| ((k * 53) % 7) as f64).collect();
        for (lx, ly) in [(nx, ny), (4, 3)] {
            let (ra, rb, px, py) = autocorrelation_pair_within(&a, &b, nx, ny, lx, ly);
            let (sa, qx, qy) = autocorrelation_within(&a, nx, ny, lx, ly);
            let (sb, _, _) = autocorrelation_within(&b, nx, ny, lx, ly);
            assert_eq!((px, py), (qx, qy));
            for k in 0..px * py {
                assert!((ra[k] - sa[k]).abs() < 1e-9, "a at {k}");
                assert!((rb[k] - sb[k]).abs() < 1e-9, "b at {k}");
            }
        }
    }

    #[test]
    fn fft_and_separable_match_direct_sum() {
        // Oracle: the defining double sum, on a non-square raster with an
        // asymmetric stencil (catches flipped or shifted kernels).
        let (nx, ny, r) = (13, 7, 3);
        let data: Vec<f64> = (0..nx * ny).map(|k| ((k * 37) % 11) as f64 - 4.0).collect();
        let w1: Vec<f64> = (0..2 * r + 1).map(|k| 1.0 + k as f64 * 0.5).collect();
        let sep = Stencil::Separable { r, w: w1.clone() };
        let full = sep.full_weights();
        let want = direct(&data, nx, ny, r, &full);
        let got_sep = separable(&data, nx, ny, r, &w1);
        let got_fft = convolve_fft(&data, nx, ny, r, &full);
        for k in 0..nx * ny {
            assert!((got_sep[k] - want[k]).abs() < 1e-9, "separable at {k}");
            assert!((got_fft[k] - want[k]).abs() < 1e-9, "fft at {k}");
        }
        let kw: Vec<f64> = (0..(2 * r + 1) * (2 * r + 1))
            .map(|k| (k % 5) as f64)
            .collect();
        let want = direct(&data, nx, ny, r, &kw);
        let got = convolve_fft(&data, nx, ny, r, &kw);
        for k in 0..nx * ny {
            assert!((got[k] - want[k]).abs() < 1e-9, "full fft at {k}");
        }
    }
}

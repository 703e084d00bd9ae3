//! One RK4 advection step for [`LANES`] larvae at once — the inner loop of particle tracking.
//!
//! Three forms give bit-for-bit the same positions:
//! - portable: each RK4 stage for all lanes before the next (one larva's stages are a chain
//!   of dependent look-ups, and interleaving independent chains lets the processor overlap
//!   them);
//! - AVX2 and AVX-512: the lanes' coordinates in vector registers (four or eight to one);
//!   each lane's bilinear coefficients (one 64-byte row) are loaded and the block transposed
//!   in registers, which measured faster than gathers on this project's machine.
//!
//! They agree exactly because all evaluate the same IEEE operations in the same order: Rust
//! never fuses a multiply and an add on its own, and the vector forms use no fused
//! multiply-add either (tested in `tests` below against the one-larva step and the grid's
//! point location, on a field with coast, land and the grid's edge).
//!
//! The fastest form the processor has is chosen at run time ([`Advect::detect`]); the
//! dispersal matrices are the same for the same seed on any machine.

use super::field::FieldLattice;
use crate::grid::Grid;

/// Larvae tracked side by side.
pub const LANES: usize = 16;

/// One coordinate of every lane. Units: m.
pub type Lanes = [f64; LANES];

/// Which form of the step runs. A vector form can only be had from [`Advect::detect`] or
/// [`Advect::all`], which ask the processor first — that is what makes calling it sound.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Advect {
    form: Form,
}

/// The forms of the step.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Form {
    Portable,
    /// Four lanes to a 256-bit register (AVX2).
    Avx2,
    /// Eight lanes to a 512-bit register (AVX-512F and DQ).
    Avx512,
}

impl Advect {
    /// The fastest form this processor runs.
    pub fn detect() -> Self {
        *Self::all().last().expect("the portable form always runs")
    }

    /// The fastest form this processor runs for a padded lattice of `nodes` squares (the
    /// AVX2 form indexes them in 32 bits). The environment variable `DRIFTPLAN_LANES`
    /// (`portable`, `avx2`, `avx512`) picks a slower form instead, for timing the forms
    /// against each other; a form the processor lacks is never taken.
    pub fn detect_for(nodes: usize) -> Self {
        let fits = nodes < i32::MAX as usize;
        let wanted = std::env::var("DRIFTPLAN_LANES").ok();
        let usable: Vec<Self> = Self::all()
            .into_iter()
            .filter(|f| fits || f.form != Form::Avx2)
            .collect();
        wanted
            .and_then(|w| usable.iter().find(|f| f.name() == w).copied())
            .or_else(|| usable.last().copied())
            .expect("the portable form always runs")
    }

    /// The portable form, whatever the processor.
    pub fn portable() -> Self {
        Advect {
            form: Form::Portable,
        }
    }

    /// Every form this processor runs, slowest first (for tests and benchmarks).
    pub fn all() -> Vec<Self> {
        let mut forms = vec![Self::portable()];
        #[cfg(target_arch = "x86_64")]
        {
            if std::arch::is_x86_feature_detected!("avx2") {
                forms.push(Advect { form: Form::Avx2 });
            }
            if std::arch::is_x86_feature_detected!("avx512f")
                && std::arch::is_x86_feature_detected!("avx512dq")
            {
                forms.push(Advect { form: Form::Avx512 });
            }
        }
        forms
    }

    /// The instruction set this form uses: `portable`, `avx2` or `avx512`.
    pub fn name(self) -> &'static str {
        match self.form {
            Form::Portable => "portable",
            Form::Avx2 => "avx2",
            Form::Avx512 => "avx512",
        }
    }

    /// Moves every lane by one classical RK4 step of length `h` (s) in the field `lattice`:
    /// k₁ = u(x), k₂ = u(x + h·k₁/2), k₃ = u(x + h·k₂/2), k₄ = u(x + h·k₃),
    /// x ← x + h/6·(k₁ + 2k₂ + 2k₃ + k₄) — [`super::Tracker::rk4`] for every lane. A lane at
    /// NaN stays at NaN (a parked larva).
    #[inline]
    pub fn step(self, lattice: &FieldLattice, h: f64, xs: &mut Lanes, ys: &mut Lanes) {
        match self.form {
            // SAFETY (both vector arms): the form was set only after the processor reported
            // the instruction sets it needs (`Advect::all`; the field is private).
            #[cfg(target_arch = "x86_64")]
            Form::Avx512 => unsafe { avx512::step(lattice, h, xs, ys) },
            #[cfg(target_arch = "x86_64")]
            Form::Avx2 => unsafe { avx2::step(lattice, h, xs, ys) },
            _ => step_portable(lattice, h, xs, ys),
        }
    }

    /// The cell under every lane: its id, [`crate::grid::NO_CELL`] on a lattice square with
    /// no cell (land), or [`OFF_GRID`] beyond the lattice (NaN lanes too) — `Grid::locate`'s
    /// arithmetic (division by the cell size, truncation as the floor), as in
    /// [`super::Tracker::follow`].
    #[inline]
    pub fn locate(self, grid: &Grid, xs: &Lanes, ys: &Lanes, at: &mut [u32; LANES]) {
        match self.form {
            // SAFETY: as in `step`.
            #[cfg(target_arch = "x86_64")]
            Form::Avx512 => unsafe { avx512::locate(grid, xs, ys, at) },
            #[cfg(target_arch = "x86_64")]
            Form::Avx2 => unsafe { avx2::locate(grid, xs, ys, at) },
            _ => locate_portable(grid, xs, ys, at),
        }
    }
}

/// [`Advect::locate`]'s answer for a point beyond the grid's lattice (land is
/// [`crate::grid::NO_CELL`]).
pub const OFF_GRID: u32 = u32::MAX - 1;

/// The portable [`Advect::locate`].
fn locate_portable(grid: &Grid, xs: &Lanes, ys: &Lanes, at: &mut [u32; LANES]) {
    let (cols, rows) = (grid.n_cols as f64, grid.n_rows as f64);
    for l in 0..LANES {
        let c = (xs[l] - grid.origin[0]) / grid.cell_size_m;
        let r = (ys[l] - grid.origin[1]) / grid.cell_size_m;
        at[l] = if !(c >= 0.0 && r >= 0.0 && c < cols && r < rows) {
            OFF_GRID
        } else {
            grid.lattice[r as usize * grid.n_cols as usize + c as usize]
        };
    }
}

/// The portable step: stage by stage over the lanes.
fn step_portable(lattice: &FieldLattice, h: f64, xs: &mut Lanes, ys: &mut Lanes) {
    let mut k1 = [[0.0; 2]; LANES];
    let mut k2 = [[0.0; 2]; LANES];
    let mut k3 = [[0.0; 2]; LANES];
    let mut k4 = [[0.0; 2]; LANES];
    for l in 0..LANES {
        k1[l] = lattice.velocity(xs[l], ys[l]);
    }
    for l in 0..LANES {
        k2[l] = lattice.velocity(xs[l] + 0.5 * h * k1[l][0], ys[l] + 0.5 * h * k1[l][1]);
    }
    for l in 0..LANES {
        k3[l] = lattice.velocity(xs[l] + 0.5 * h * k2[l][0], ys[l] + 0.5 * h * k2[l][1]);
    }
    for l in 0..LANES {
        k4[l] = lattice.velocity(xs[l] + h * k3[l][0], ys[l] + h * k3[l][1]);
    }
    for l in 0..LANES {
        xs[l] += h / 6.0 * (k1[l][0] + 2.0 * k2[l][0] + 2.0 * k3[l][0] + k4[l][0]);
        ys[l] += h / 6.0 * (k1[l][1] + 2.0 * k2[l][1] + 2.0 * k3[l][1] + k4[l][1]);
    }
}

#[cfg(target_arch = "x86_64")]
mod avx512 {
    use super::{FieldLattice, Grid, Lanes, LANES, OFF_GRID};
    use std::arch::x86_64::*;

    /// Lanes in one register.
    const W: usize = 8;

    /// [`FieldLattice::velocity`] for eight points: where all four corners of a point's
    /// square hold a cell (most of the sea) the ready coefficients are gathered and the
    /// polynomial evaluated in the same order as there; the other squares hold NaN
    /// coefficients, and the lanes that meet one are looked up one by one.
    #[target_feature(enable = "avx512f,avx512dq")]
    unsafe fn velocity(lat: &FieldLattice, x: __m512d, y: __m512d) -> (__m512d, __m512d) {
        let zero = _mm512_setzero_pd();
        let gx = _mm512_mul_pd(
            _mm512_sub_pd(x, _mm512_set1_pd(lat.base[0])),
            _mm512_set1_pd(lat.inv_cell),
        );
        let gy = _mm512_mul_pd(
            _mm512_sub_pd(y, _mm512_set1_pd(lat.base[1])),
            _mm512_set1_pd(lat.inv_cell),
        );
        // Ordered comparisons: NaN is outside, as in the scalar look-up.
        let inside = _mm512_cmp_pd_mask::<_CMP_GE_OQ>(gx, zero)
            & _mm512_cmp_pd_mask::<_CMP_GE_OQ>(gy, zero)
            & _mm512_cmp_pd_mask::<_CMP_LT_OQ>(gx, _mm512_set1_pd(lat.limit[0]))
            & _mm512_cmp_pd_mask::<_CMP_LT_OQ>(gy, _mm512_set1_pd(lat.limit[1]));
        // Outside lanes look at node 0 (padding; their result is zeroed below).
        let gx = _mm512_maskz_mov_pd(inside, gx);
        let gy = _mm512_maskz_mov_pd(inside, gy);
        let c0 = _mm512_roundscale_pd::<{ _MM_FROUND_TO_ZERO | _MM_FROUND_NO_EXC }>(gx);
        let r0 = _mm512_roundscale_pd::<{ _MM_FROUND_TO_ZERO | _MM_FROUND_NO_EXC }>(gy);
        let fx = _mm512_sub_pd(gx, c0);
        let fy = _mm512_sub_pd(gy, r0);
        // Node r0·width + c0 (exact in f64: far below 2⁵³), eight coefficients per node.
        let node = _mm512_cvttpd_epi64(_mm512_add_pd(
            _mm512_mul_pd(r0, _mm512_set1_pd(lat.width as f64)),
            c0,
        ));
        let mut at = [0i64; W];
        _mm512_storeu_si512(at.as_mut_ptr().cast(), node);
        // Each lane's coefficients are one 64-byte row; load the eight rows and transpose
        // them into one register per coefficient (faster than eight gathers).
        let rows: [__m512d; W] =
            std::array::from_fn(|l| _mm512_loadu_pd(lat.full[at[l] as usize].as_ptr()));
        let [q0, q1, q2, q3, q4, q5, q6, q7] = transpose(rows);
        let fxy = _mm512_mul_pd(fx, fy);
        // a + b·fx + c·fy + d·fx·fy, left to right as in the scalar look-up.
        let u = _mm512_add_pd(
            _mm512_add_pd(
                _mm512_add_pd(q0, _mm512_mul_pd(q1, fx)),
                _mm512_mul_pd(q2, fy),
            ),
            _mm512_mul_pd(q3, fxy),
        );
        let v = _mm512_add_pd(
            _mm512_add_pd(
                _mm512_add_pd(q4, _mm512_mul_pd(q5, fx)),
                _mm512_mul_pd(q6, fy),
            ),
            _mm512_mul_pd(q7, fxy),
        );
        let ragged = inside & _mm512_cmp_pd_mask::<_CMP_UNORD_Q>(u, u);
        let u = _mm512_maskz_mov_pd(inside, u);
        let v = _mm512_maskz_mov_pd(inside, v);
        if ragged == 0 {
            return (u, v);
        }
        let (mut us, mut vs, mut xa, mut ya) = ([0.0; W], [0.0; W], [0.0; W], [0.0; W]);
        _mm512_storeu_pd(us.as_mut_ptr(), u);
        _mm512_storeu_pd(vs.as_mut_ptr(), v);
        _mm512_storeu_pd(xa.as_mut_ptr(), x);
        _mm512_storeu_pd(ya.as_mut_ptr(), y);
        for l in 0..W {
            if ragged >> l & 1 == 1 {
                [us[l], vs[l]] = lat.velocity(xa[l], ya[l]);
            }
        }
        (_mm512_loadu_pd(us.as_ptr()), _mm512_loadu_pd(vs.as_ptr()))
    }

    /// Transposes an 8 × 8 block of doubles held as eight row registers into eight column
    /// registers (unpack pairs, then merge pairs of pairs, then halves).
    #[target_feature(enable = "avx512f")]
    fn transpose(r: [__m512d; W]) -> [__m512d; W] {
        // a0 = r0,r1 even columns interleaved; a1 = odd columns; and so on.
        let a = [
            _mm512_unpacklo_pd(r[0], r[1]),
            _mm512_unpackhi_pd(r[0], r[1]),
            _mm512_unpacklo_pd(r[2], r[3]),
            _mm512_unpackhi_pd(r[2], r[3]),
            _mm512_unpacklo_pd(r[4], r[5]),
            _mm512_unpackhi_pd(r[4], r[5]),
            _mm512_unpacklo_pd(r[6], r[7]),
            _mm512_unpackhi_pd(r[6], r[7]),
        ];
        let lo = _mm512_setr_epi64(0, 1, 8, 9, 4, 5, 12, 13);
        let hi = _mm512_setr_epi64(2, 3, 10, 11, 6, 7, 14, 15);
        // b0: column 0 (low half) and 4 (high half) of rows 0–3; b1: columns 2 and 6;
        // b2: 1 and 5; b3: 3 and 7; b4–b7 the same for rows 4–7.
        let b = [
            _mm512_permutex2var_pd(a[0], lo, a[2]),
            _mm512_permutex2var_pd(a[0], hi, a[2]),
            _mm512_permutex2var_pd(a[1], lo, a[3]),
            _mm512_permutex2var_pd(a[1], hi, a[3]),
            _mm512_permutex2var_pd(a[4], lo, a[6]),
            _mm512_permutex2var_pd(a[4], hi, a[6]),
            _mm512_permutex2var_pd(a[5], lo, a[7]),
            _mm512_permutex2var_pd(a[5], hi, a[7]),
        ];
        let low = _mm512_setr_epi64(0, 1, 2, 3, 8, 9, 10, 11);
        let high = _mm512_setr_epi64(4, 5, 6, 7, 12, 13, 14, 15);
        [
            _mm512_permutex2var_pd(b[0], low, b[4]),
            _mm512_permutex2var_pd(b[2], low, b[6]),
            _mm512_permutex2var_pd(b[1], low, b[5]),
            _mm512_permutex2var_pd(b[3], low, b[7]),
            _mm512_permutex2var_pd(b[0], high, b[4]),
            _mm512_permutex2var_pd(b[2], high, b[6]),
            _mm512_permutex2var_pd(b[1], high, b[5]),
            _mm512_permutex2var_pd(b[3], high, b[7]),
        ]
    }

    /// [`super::locate_portable`], eight lanes to a register.
    #[target_feature(enable = "avx512f,avx512dq")]
    pub unsafe fn locate(grid: &Grid, xs: &Lanes, ys: &Lanes, at: &mut [u32; LANES]) {
        let zero = _mm512_setzero_pd();
        let size = _mm512_set1_pd(grid.cell_size_m);
        let (cols, rows) = (grid.n_cols as f64, grid.n_rows as f64);
        for i in 0..VECTORS {
            let c = _mm512_div_pd(
                _mm512_sub_pd(
                    _mm512_loadu_pd(xs[W * i..].as_ptr()),
                    _mm512_set1_pd(grid.origin[0]),
                ),
                size,
            );
            let r = _mm512_div_pd(
                _mm512_sub_pd(
                    _mm512_loadu_pd(ys[W * i..].as_ptr()),
                    _mm512_set1_pd(grid.origin[1]),
                ),
                size,
            );
            let inside = _mm512_cmp_pd_mask::<_CMP_GE_OQ>(c, zero)
                & _mm512_cmp_pd_mask::<_CMP_GE_OQ>(r, zero)
                & _mm512_cmp_pd_mask::<_CMP_LT_OQ>(c, _mm512_set1_pd(cols))
                & _mm512_cmp_pd_mask::<_CMP_LT_OQ>(r, _mm512_set1_pd(rows));
            // Square index trunc(r)·n_cols + trunc(c), exact in f64.
            let square = _mm512_add_pd(
                _mm512_mul_pd(
                    _mm512_roundscale_pd::<{ _MM_FROUND_TO_ZERO | _MM_FROUND_NO_EXC }>(r),
                    _mm512_set1_pd(cols),
                ),
                _mm512_roundscale_pd::<{ _MM_FROUND_TO_ZERO | _MM_FROUND_NO_EXC }>(c),
            );
            let mut k = [0i64; W];
            _mm512_storeu_si512(
                k.as_mut_ptr().cast(),
                _mm512_maskz_cvttpd_epi64(inside, square),
            );
            for l in 0..W {
                at[W * i + l] = if inside >> l & 1 == 1 {
                    grid.lattice[k[l] as usize]
                } else {
                    OFF_GRID
                };
            }
        }
    }

    /// Vectors of eight lanes.
    const VECTORS: usize = LANES / W;

    /// [`super::step_portable`] with the lanes in vector registers, eight to a register; the
    /// registers' look-ups are independent, so the processor overlaps them.
    #[target_feature(enable = "avx512f,avx512dq")]
    pub unsafe fn step(lat: &FieldLattice, h: f64, xs: &mut Lanes, ys: &mut Lanes) {
        let x: [__m512d; VECTORS] = std::array::from_fn(|i| _mm512_loadu_pd(xs[8 * i..].as_ptr()));
        let y: [__m512d; VECTORS] = std::array::from_fn(|i| _mm512_loadu_pd(ys[8 * i..].as_ptr()));
        let half = _mm512_set1_pd(0.5 * h);
        let whole = _mm512_set1_pd(h);
        let sixth = _mm512_set1_pd(h / 6.0);
        let two = _mm512_set1_pd(2.0);
        // x + s·k, one register per vector.
        let ahead = |s: __m512d, k: &[(__m512d, __m512d); VECTORS], i: usize| {
            (
                _mm512_add_pd(x[i], _mm512_mul_pd(s, k[i].0)),
                _mm512_add_pd(y[i], _mm512_mul_pd(s, k[i].1)),
            )
        };
        let k1: [(__m512d, __m512d); VECTORS] = std::array::from_fn(|i| velocity(lat, x[i], y[i]));
        let k2: [(__m512d, __m512d); VECTORS] = std::array::from_fn(|i| {
            let (a, b) = ahead(half, &k1, i);
            velocity(lat, a, b)
        });
        let k3: [(__m512d, __m512d); VECTORS] = std::array::from_fn(|i| {
            let (a, b) = ahead(half, &k2, i);
            velocity(lat, a, b)
        });
        let k4: [(__m512d, __m512d); VECTORS] = std::array::from_fn(|i| {
            let (a, b) = ahead(whole, &k3, i);
            velocity(lat, a, b)
        });
        // (k₁ + 2k₂ + 2k₃ + k₄), left to right as in the portable step.
        let sum = |a: __m512d, b: __m512d, c: __m512d, d: __m512d| {
            _mm512_add_pd(
                _mm512_add_pd(
                    _mm512_add_pd(a, _mm512_mul_pd(two, b)),
                    _mm512_mul_pd(two, c),
                ),
                d,
            )
        };
        for i in 0..VECTORS {
            let su = sum(k1[i].0, k2[i].0, k3[i].0, k4[i].0);
            let sv = sum(k1[i].1, k2[i].1, k3[i].1, k4[i].1);
            _mm512_storeu_pd(
                xs[8 * i..].as_mut_ptr(),
                _mm512_add_pd(x[i], _mm512_mul_pd(sixth, su)),
            );
            _mm512_storeu_pd(
                ys[8 * i..].as_mut_ptr(),
                _mm512_add_pd(y[i], _mm512_mul_pd(sixth, sv)),
            );
        }
    }
}

#[cfg(target_arch = "x86_64")]
mod avx2 {
    use super::{FieldLattice, Grid, Lanes, LANES, OFF_GRID};
    use std::arch::x86_64::*;

    /// Lanes in one register.
    const W: usize = 4;
    /// Registers for all lanes.
    const VECTORS: usize = LANES / W;
    /// Truncation toward zero, no exceptions.
    const TRUNC: i32 = _MM_FROUND_TO_ZERO | _MM_FROUND_NO_EXC;

    /// Transposes four rows of four doubles into four columns.
    #[target_feature(enable = "avx2")]
    fn transpose(r: [__m256d; 4]) -> [__m256d; 4] {
        // t0 = [r0₀ r1₀ r0₂ r1₂], t1 = [r0₁ r1₁ r0₃ r1₃], t2, t3 the same for rows 2 and 3.
        let t0 = _mm256_unpacklo_pd(r[0], r[1]);
        let t1 = _mm256_unpackhi_pd(r[0], r[1]);
        let t2 = _mm256_unpacklo_pd(r[2], r[3]);
        let t3 = _mm256_unpackhi_pd(r[2], r[3]);
        [
            _mm256_permute2f128_pd::<0x20>(t0, t2),
            _mm256_permute2f128_pd::<0x20>(t1, t3),
            _mm256_permute2f128_pd::<0x31>(t0, t2),
            _mm256_permute2f128_pd::<0x31>(t1, t3),
        ]
    }

    /// The AVX-512 look-up's method, four lanes to a register: each lane's u and v
    /// coefficient rows are loaded and transposed; squares not wholly at sea hold NaN
    /// coefficients and their lanes are looked up one by one.
    #[target_feature(enable = "avx2")]
    unsafe fn velocity(lat: &FieldLattice, x: __m256d, y: __m256d) -> (__m256d, __m256d) {
        let zero = _mm256_setzero_pd();
        let gx = _mm256_mul_pd(
            _mm256_sub_pd(x, _mm256_set1_pd(lat.base[0])),
            _mm256_set1_pd(lat.inv_cell),
        );
        let gy = _mm256_mul_pd(
            _mm256_sub_pd(y, _mm256_set1_pd(lat.base[1])),
            _mm256_set1_pd(lat.inv_cell),
        );
        // Ordered comparisons: NaN is outside, as in the scalar look-up.
        let inside = _mm256_and_pd(
            _mm256_and_pd(
                _mm256_cmp_pd::<_CMP_GE_OQ>(gx, zero),
                _mm256_cmp_pd::<_CMP_GE_OQ>(gy, zero),
            ),
            _mm256_and_pd(
                _mm256_cmp_pd::<_CMP_LT_OQ>(gx, _mm256_set1_pd(lat.limit[0])),
                _mm256_cmp_pd::<_CMP_LT_OQ>(gy, _mm256_set1_pd(lat.limit[1])),
            ),
        );
        // Outside lanes look at node 0 (padding; their result is zeroed below).
        let gx = _mm256_and_pd(inside, gx);
        let gy = _mm256_and_pd(inside, gy);
        let c0 = _mm256_round_pd::<TRUNC>(gx);
        let r0 = _mm256_round_pd::<TRUNC>(gy);
        let fx = _mm256_sub_pd(gx, c0);
        let fy = _mm256_sub_pd(gy, r0);
        // Node r0·width + c0, exact in f64 and within i32 (the padded lattice is far smaller).
        let node = _mm256_cvttpd_epi32(_mm256_add_pd(
            _mm256_mul_pd(r0, _mm256_set1_pd(lat.width as f64)),
            c0,
        ));
        let mut at = [0i32; W];
        _mm_storeu_si128(at.as_mut_ptr().cast(), node);
        let row =
            |l: usize, half: usize| _mm256_loadu_pd(lat.full[at[l] as usize][4 * half..].as_ptr());
        let [a, b, c, d] = transpose([row(0, 0), row(1, 0), row(2, 0), row(3, 0)]);
        let [e, f, g, h] = transpose([row(0, 1), row(1, 1), row(2, 1), row(3, 1)]);
        let fxy = _mm256_mul_pd(fx, fy);
        // a + b·fx + c·fy + d·fx·fy, left to right as in the scalar look-up.
        let u = _mm256_add_pd(
            _mm256_add_pd(_mm256_add_pd(a, _mm256_mul_pd(b, fx)), _mm256_mul_pd(c, fy)),
            _mm256_mul_pd(d, fxy),
        );
        let v = _mm256_add_pd(
            _mm256_add_pd(_mm256_add_pd(e, _mm256_mul_pd(f, fx)), _mm256_mul_pd(g, fy)),
            _mm256_mul_pd(h, fxy),
        );
        let ragged = _mm256_movemask_pd(_mm256_and_pd(inside, _mm256_cmp_pd::<_CMP_UNORD_Q>(u, u)));
        let u = _mm256_and_pd(inside, u);
        let v = _mm256_and_pd(inside, v);
        if ragged == 0 {
            return (u, v);
        }
        let (mut us, mut vs, mut xa, mut ya) = ([0.0; W], [0.0; W], [0.0; W], [0.0; W]);
        _mm256_storeu_pd(us.as_mut_ptr(), u);
        _mm256_storeu_pd(vs.as_mut_ptr(), v);
        _mm256_storeu_pd(xa.as_mut_ptr(), x);
        _mm256_storeu_pd(ya.as_mut_ptr(), y);
        for l in 0..W {
            if ragged >> l & 1 == 1 {
                [us[l], vs[l]] = lat.velocity(xa[l], ya[l]);
            }
        }
        (_mm256_loadu_pd(us.as_ptr()), _mm256_loadu_pd(vs.as_ptr()))
    }

    /// [`super::step_portable`] with the lanes in vector registers, four to a register.
    #[target_feature(enable = "avx2")]
    pub unsafe fn step(lat: &FieldLattice, h: f64, xs: &mut Lanes, ys: &mut Lanes) {
        let x: [__m256d; VECTORS] = std::array::from_fn(|i| _mm256_loadu_pd(xs[W * i..].as_ptr()));
        let y: [__m256d; VECTORS] = std::array::from_fn(|i| _mm256_loadu_pd(ys[W * i..].as_ptr()));
        let half = _mm256_set1_pd(0.5 * h);
        let whole = _mm256_set1_pd(h);
        let sixth = _mm256_set1_pd(h / 6.0);
        let two = _mm256_set1_pd(2.0);
        let ahead = |s: __m256d, k: &[(__m256d, __m256d); VECTORS], i: usize| {
            (
                _mm256_add_pd(x[i], _mm256_mul_pd(s, k[i].0)),
                _mm256_add_pd(y[i], _mm256_mul_pd(s, k[i].1)),
            )
        };
        let k1: [(__m256d, __m256d); VECTORS] = std::array::from_fn(|i| velocity(lat, x[i], y[i]));
        let k2: [(__m256d, __m256d); VECTORS] = std::array::from_fn(|i| {
            let (a, b) = ahead(half, &k1, i);
            velocity(lat, a, b)
        });
        let k3: [(__m256d, __m256d); VECTORS] = std::array::from_fn(|i| {
            let (a, b) = ahead(half, &k2, i);
            velocity(lat, a, b)
        });
        let k4: [(__m256d, __m256d); VECTORS] = std::array::from_fn(|i| {
            let (a, b) = ahead(whole, &k3, i);
            velocity(lat, a, b)
        });
        let sum = |a: __m256d, b: __m256d, c: __m256d, d: __m256d| {
            _mm256_add_pd(
                _mm256_add_pd(
                    _mm256_add_pd(a, _mm256_mul_pd(two, b)),
                    _mm256_mul_pd(two, c),
                ),
                d,
            )
        };
        for i in 0..VECTORS {
            let su = sum(k1[i].0, k2[i].0, k3[i].0, k4[i].0);
            let sv = sum(k1[i].1, k2[i].1, k3[i].1, k4[i].1);
            _mm256_storeu_pd(
                xs[W * i..].as_mut_ptr(),
                _mm256_add_pd(x[i], _mm256_mul_pd(sixth, su)),
            );
            _mm256_storeu_pd(
                ys[W * i..].as_mut_ptr(),
                _mm256_add_pd(y[i], _mm256_mul_pd(sixth, sv)),
            );
        }
    }

    /// [`super::locate_portable`], four lanes to a register.
    #[target_feature(enable = "avx2")]
    pub unsafe fn locate(grid: &Grid, xs: &Lanes, ys: &Lanes, at: &mut [u32; LANES]) {
        let zero = _mm256_setzero_pd();
        let size = _mm256_set1_pd(grid.cell_size_m);
        let (cols, rows) = (grid.n_cols as f64, grid.n_rows as f64);
        for i in 0..VECTORS {
            let c = _mm256_div_pd(
                _mm256_sub_pd(
                    _mm256_loadu_pd(xs[W * i..].as_ptr()),
                    _mm256_set1_pd(grid.origin[0]),
                ),
                size,
            );
            let r = _mm256_div_pd(
                _mm256_sub_pd(
                    _mm256_loadu_pd(ys[W * i..].as_ptr()),
                    _mm256_set1_pd(grid.origin[1]),
                ),
                size,
            );
            let inside = _mm256_and_pd(
                _mm256_and_pd(
                    _mm256_cmp_pd::<_CMP_GE_OQ>(c, zero),
                    _mm256_cmp_pd::<_CMP_GE_OQ>(r, zero),
                ),
                _mm256_and_pd(
                    _mm256_cmp_pd::<_CMP_LT_OQ>(c, _mm256_set1_pd(cols)),
                    _mm256_cmp_pd::<_CMP_LT_OQ>(r, _mm256_set1_pd(rows)),
                ),
            );
            // Square index trunc(r)·n_cols + trunc(c), exact in f64; zero for outside lanes.
            let square = _mm256_and_pd(
                inside,
                _mm256_add_pd(
                    _mm256_mul_pd(_mm256_round_pd::<TRUNC>(r), _mm256_set1_pd(cols)),
                    _mm256_round_pd::<TRUNC>(c),
                ),
            );
            let mut k = [0i32; W];
            _mm_storeu_si128(k.as_mut_ptr().cast(), _mm256_cvttpd_epi32(square));
            let inside = _mm256_movemask_pd(inside);
            for l in 0..W {
                at[W * i + l] = if inside >> l & 1 == 1 {
                    grid.lattice[k[l] as usize]
                } else {
                    OFF_GRID
                };
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::connectivity::CurrentField;
    use crate::grid::Grid;

    /// A 9 × 7 grid with a land block and a non-linear field.
    fn coast() -> (Grid, Vec<f64>, Vec<f64>) {
        let grid = super::super::field::land_block_grid();
        let u = grid
            .cells
            .iter()
            .map(|c| 0.4 * (c.centre[0] / 700.0).sin())
            .collect();
        let v = grid
            .cells
            .iter()
            .map(|c| 0.3 * (c.centre[1] / 900.0).cos())
            .collect();
        (grid, u, v)
    }

    #[test]
    fn every_form_takes_every_lane_to_the_same_bits_as_the_one_larva_step() {
        // The reference is `Tracker::rk4`, the textbook RK4 step (Press et al., Numerical
        // Recipes §17.1) for one larva; every form this processor runs (`Advect::all`:
        // portable, AVX2, AVX-512) must give its result exactly, at sea, next to land, in the
        // outer half cell, beyond the grid and for parked (NaN) lanes.
        let (grid, u, v) = coast();
        let field = CurrentField::new(&grid, &u, &v);
        let lattice = FieldLattice::new(&field);
        let larvae = crate::plan::connectivity::Larvae {
            larval_days: 1.0,
            diffusivity_m2_s: 0.0,
            settle_window_days: (1.0, 1.0),
        };
        let tracker = super::super::Tracker::new(field, &larvae, 1.0);
        let h = tracker.dt_s;
        let forms = Advect::all();
        let mut checked = 0;
        for i in 0..40 {
            let mut xs = [0.0; LANES];
            let mut ys = [0.0; LANES];
            for l in 0..LANES {
                xs[l] = -3600.0 + 271.3 * ((i * LANES + l) % 41) as f64;
                ys[l] = 100.0 + 197.9 * ((i * 7 + l * 3) % 39) as f64;
            }
            if i % 5 == 0 {
                xs[i % LANES] = f64::NAN;
                ys[i % LANES] = f64::NAN;
            }
            for &form in &forms {
                let (mut x, mut y) = (xs, ys);
                form.step(&lattice, h, &mut x, &mut y);
                for l in 0..LANES {
                    let want = tracker.rk4([xs[l], ys[l]]);
                    assert_eq!(
                        (x[l].to_bits(), y[l].to_bits()),
                        (want[0].to_bits(), want[1].to_bits()),
                        "{form:?} lane {l} from ({}, {})",
                        xs[l],
                        ys[l]
                    );
                    checked += 1;
                }
            }
        }
        assert_eq!(checked, 40 * LANES * forms.len());
    }

    #[test]
    fn every_form_places_every_lane_where_the_grid_does() {
        // The reference is `Grid::locate` and `Grid::lattice_position` (the grid's own point
        // location): a point on a cell → that cell, on a lattice square without one → land,
        // beyond the lattice or NaN → off the grid; every form must agree with it.
        let (grid, _, _) = coast();
        let mut checked = [0usize; 3];
        for i in 0..60 {
            let mut xs = [0.0; LANES];
            let mut ys = [0.0; LANES];
            for l in 0..LANES {
                xs[l] = -3900.0 + 197.3 * ((i * LANES + l) % 61) as f64;
                ys[l] = -400.0 + 151.9 * ((i * 7 + l * 3) % 59) as f64;
            }
            xs[i % LANES] = if i % 3 == 0 { f64::NAN } else { xs[i % LANES] };
            for form in Advect::all() {
                let mut at = [0; LANES];
                form.locate(&grid, &xs, &ys, &mut at);
                for l in 0..LANES {
                    let p = [xs[l], ys[l]];
                    let want = match (grid.lattice_position(p), grid.locate(p)) {
                        (None, _) => OFF_GRID,
                        (Some(_), None) => crate::grid::NO_CELL,
                        (Some(_), Some(cell)) => cell,
                    };
                    assert_eq!(at[l], want, "{form:?} at {p:?}");
                    checked[match want {
                        OFF_GRID => 0,
                        crate::grid::NO_CELL => 1,
                        _ => 2,
                    }] += 1;
                }
            }
        }
        assert!(checked.iter().all(|&n| n > 50), "{checked:?}");
    }
}

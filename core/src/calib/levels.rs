//! Per-level replicate accumulators and the lack-of-fit F test.
//!
//! Readings are grouped by their nominal `x` (the level, matched by its
//! exact bit pattern; `−0.0` and `0.0` are one level). Each level keeps a
//! weighted count, the mean of `y` and the second moment about it, updated
//! one reading at a time (West 1979) and merged exactly (Chan, Golub &
//! LeVeque 1979). The pure-error sum of squares is the sum of the per-level
//! second moments, so the store streams and merges like the pair
//! accumulator.
//!
//! For a model with `p` parameters fitted to `n` readings at `c` levels,
//! `SSE = SS_PE + SS_LOF` with `SS_LOF = Σⱼ Wⱼ·(ȳⱼ − ŷ(xⱼ))²` (computed
//! directly from the level means, not as a difference), and
//! `F = [SS_LOF/(c − p)] / [SS_PE/(n − c)]` on `(c − p, n − c)` degrees of
//! freedom.
//!
//! Two stores with the same methods: [`LevelSet`] grows on the heap (a
//! sorted `Vec`); [`FixedLevels`] holds at most `N` levels in place, for
//! firmware without an allocator.

use super::CalibError;
use crate::line::LineFit;
use alloc::vec::Vec;

/// One calibration level: the readings taken at one nominal `x`.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Level {
    /// The nominal `x` of the level.
    pub x: f64,
    /// Readings at the level.
    pub count: u64,
    /// Sum of the readings' weights.
    pub weight_sum: f64,
    /// Weighted mean of `y` at the level.
    pub mean_y: f64,
    /// `Σ w·(y − ȳ)²` at the level: its pure-error sum of squares.
    pub m2: f64,
}

impl Level {
    const EMPTY: Level = Level {
        x: 0.0,
        count: 0,
        weight_sum: 0.0,
        mean_y: 0.0,
        m2: 0.0,
    };

    fn first(x: f64, y: f64, w: f64) -> Level {
        Level {
            x,
            count: 1,
            weight_sum: w,
            mean_y: y,
            m2: 0.0,
        }
    }

    /// A level every update can produce: finite sums, a positive weight, a
    /// non-negative spread (what a saved state must satisfy to restore).
    fn is_sound(&self) -> bool {
        self.weight_sum.is_finite()
            && self.weight_sum > 0.0
            && self.mean_y.is_finite()
            && self.m2.is_finite()
            && self.m2 >= 0.0
    }

    /// West (1979) weighted update; refuses (leaving the level as it was)
    /// if a sum would overflow.
    fn add(&mut self, y: f64, w: f64) -> Result<(), CalibError> {
        let wn = self.weight_sum + w;
        let d = y - self.mean_y;
        let mean = self.mean_y + d * (w / wn);
        let t = Level {
            x: self.x,
            count: self.count.checked_add(1).ok_or(CalibError::Overflow)?,
            weight_sum: wn,
            mean_y: mean,
            // The step is ≥ 0 in exact arithmetic; rounding of the new mean
            // past `y` can flip its sign, so keep the sum non-negative.
            m2: (self.m2 + w * d * (y - mean)).max(0.0),
        };
        if !t.is_sound() {
            return Err(CalibError::Overflow);
        }
        *self = t;
        Ok(())
    }

    /// Chan–Golub–LeVeque merge of two summaries of the same level;
    /// refuses (leaving the level as it was) if a sum would overflow.
    fn absorb(&mut self, o: &Level) -> Result<(), CalibError> {
        let wn = self.weight_sum + o.weight_sum;
        let d = o.mean_y - self.mean_y;
        let t = Level {
            x: self.x,
            count: self
                .count
                .checked_add(o.count)
                .ok_or(CalibError::Overflow)?,
            weight_sum: wn,
            mean_y: self.mean_y + d * (o.weight_sum / wn),
            m2: self.m2 + o.m2 + d * d * (self.weight_sum * o.weight_sum / wn),
        };
        if !t.is_sound() {
            return Err(CalibError::Overflow);
        }
        *self = t;
        Ok(())
    }

    /// Standard deviation of the readings at the level, `√(m2/(count − 1))`
    /// (the sample SD for unit weights); `None` with fewer than two readings.
    pub fn sd(&self) -> Option<f64> {
        if self.count < 2 {
            return None;
        }
        Some(libm::sqrt(self.m2 / (self.count - 1) as f64))
    }
}

/// The lack-of-fit analysis of a fitted model against replicate levels.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct LackOfFit {
    /// Readings `n`.
    pub count: u64,
    /// Distinct levels `c`.
    pub levels: usize,
    /// Model parameters `p`.
    pub params: usize,
    /// Lack-of-fit sum of squares `Σ Wⱼ(ȳⱼ − ŷⱼ)²`.
    pub ss_lack_of_fit: f64,
    /// Its degrees of freedom `c − p`.
    pub df_lack_of_fit: u64,
    /// Pure-error sum of squares `Σⱼ Σᵢ w(y − ȳⱼ)²`.
    pub ss_pure_error: f64,
    /// Its degrees of freedom `n − c`.
    pub df_pure_error: u64,
    /// `F = [SS_LOF/(c − p)] / [SS_PE/(n − c)]` (`+∞` when the pure error is
    /// exactly zero and the lack of fit is not).
    pub f_stat: f64,
}

impl LackOfFit {
    /// Upper-tail p value of the F statistic.
    #[cfg(feature = "std")]
    pub fn p_value(&self) -> f64 {
        let p = crate::dist::f_upper(
            self.f_stat,
            self.df_lack_of_fit as f64,
            self.df_pure_error as f64,
        );
        if p.is_nan() {
            1.0
        } else {
            p
        }
    }

    /// Critical value `F(level; c − p, n − c)` (e.g. `level = 0.95`).
    ///
    /// # Errors
    /// [`CalibError::InvalidLevel`].
    #[cfg(feature = "std")]
    pub fn critical_value(&self, level: f64) -> Result<f64, CalibError> {
        super::check_level(level)?;
        Ok(crate::dist::f_quantile(
            level,
            self.df_lack_of_fit as f64,
            self.df_pure_error as f64,
        ))
    }
}

fn key(x: f64) -> f64 {
    // −0.0 and 0.0 are the same nominal level.
    if x == 0.0 {
        0.0
    } else {
        x
    }
}

fn find(levels: &[Level], x: f64) -> Result<usize, usize> {
    levels.binary_search_by(|l| l.x.total_cmp(&x))
}

fn check_pair(x: f64, y: f64, w: f64, index: usize) -> Result<(), CalibError> {
    if !x.is_finite() || !y.is_finite() {
        return Err(CalibError::NonFinite { index });
    }
    if !(w > 0.0) || !w.is_finite() {
        return Err(CalibError::InvalidWeight { index });
    }
    Ok(())
}

fn check_slices(xs: &[f64], ys: &[f64], ws: Option<&[f64]>) -> Result<(), CalibError> {
    if xs.len() != ys.len() {
        return Err(CalibError::LengthMismatch {
            expected: xs.len(),
            found: ys.len(),
        });
    }
    if let Some(ws) = ws {
        if ws.len() != xs.len() {
            return Err(CalibError::LengthMismatch {
                expected: xs.len(),
                found: ws.len(),
            });
        }
    }
    for i in 0..xs.len() {
        check_pair(xs[i], ys[i], ws.map_or(1.0, |w| w[i]), i)?;
    }
    Ok(())
}

fn horner(coefficients: &[f64], x: f64) -> f64 {
    coefficients.iter().rev().fold(0.0, |acc, c| acc * x + c)
}

fn analyse(
    levels: &[Level],
    params: usize,
    fitted: impl Fn(f64) -> f64,
) -> Result<LackOfFit, CalibError> {
    let count: u64 = levels.iter().map(|l| l.count).sum();
    let c = levels.len();
    if c <= params {
        return Err(CalibError::TooFewLevels { levels: c, params });
    }
    let df_pe = count - c as u64;
    if df_pe == 0 {
        return Err(CalibError::NoReplicates);
    }
    let mut ss_pe = 0.0;
    let mut ss_lof = 0.0;
    for l in levels {
        ss_pe += l.m2;
        let fx = fitted(l.x);
        if !fx.is_finite() {
            return Err(CalibError::NonFinite { index: 0 });
        }
        let d = l.mean_y - fx;
        ss_lof += l.weight_sum * d * d;
    }
    let df_lof = (c - params) as u64;
    let num = ss_lof / df_lof as f64;
    let den = ss_pe / df_pe as f64;
    let f_stat = if den > 0.0 {
        num / den
    } else if num > 0.0 {
        f64::INFINITY
    } else {
        return Err(CalibError::ZeroResidual);
    };
    if !ss_lof.is_finite() || !ss_pe.is_finite() {
        return Err(CalibError::Overflow);
    }
    Ok(LackOfFit {
        count,
        levels: c,
        params,
        ss_lack_of_fit: ss_lof,
        df_lack_of_fit: df_lof,
        ss_pure_error: ss_pe,
        df_pure_error: df_pe,
        f_stat,
    })
}

/// Methods shared by both stores; `$insert` puts a new level at an index.
macro_rules! level_methods {
    () => {
        /// Adds one reading `y` at nominal level `x` with unit weight.
        ///
        /// # Errors
        /// [`CalibError::NonFinite`]; [`CalibError::LevelCapacity`] for a
        /// full fixed store; [`CalibError::Overflow`] if a level's sums or
        /// the reading count would overflow. The store is unchanged on
        /// error.
        pub fn push(&mut self, x: f64, y: f64) -> Result<(), CalibError> {
            self.push_weighted(x, y, 1.0)
        }

        /// Adds one reading with weight `w`.
        ///
        /// # Errors
        /// As [`push`](Self::push), plus [`CalibError::InvalidWeight`].
        pub fn push_weighted(&mut self, x: f64, y: f64, w: f64) -> Result<(), CalibError> {
            check_pair(x, y, w, 0)?;
            if self.count() == u64::MAX {
                // The total reading count must stay representable.
                return Err(CalibError::Overflow);
            }
            let x = key(x);
            match find(self.levels(), x) {
                Ok(i) => self.levels_mut()[i].add(y, w),
                Err(i) => self.insert_at(i, Level::first(x, y, w)),
            }
        }

        /// Adds the readings `(xs[i], ys[i])` with unit weight.
        ///
        /// # Errors
        /// [`CalibError::LengthMismatch`], [`CalibError::NonFinite`] with the
        /// first offending index, [`CalibError::LevelCapacity`]. Nothing is
        /// added on error.
        pub fn extend(&mut self, xs: &[f64], ys: &[f64]) -> Result<(), CalibError> {
            check_slices(xs, ys, None)?;
            self.extend_checked(xs, ys, None)
        }

        /// Adds the readings with weights `ws`.
        ///
        /// # Errors
        /// As [`extend`](Self::extend), plus [`CalibError::InvalidWeight`].
        pub fn extend_weighted(
            &mut self,
            xs: &[f64],
            ys: &[f64],
            ws: &[f64],
        ) -> Result<(), CalibError> {
            check_slices(xs, ys, Some(ws))?;
            self.extend_checked(xs, ys, Some(ws))
        }

        /// The levels, in increasing `x`.
        pub fn levels(&self) -> &[Level] {
            self.as_slice()
        }

        /// Number of distinct levels.
        pub fn level_count(&self) -> usize {
            self.levels().len()
        }

        /// Number of readings.
        pub fn count(&self) -> u64 {
            // Updates, merges and restores keep the total within `u64`.
            self.levels()
                .iter()
                .fold(0u64, |n, l| n.saturating_add(l.count))
        }

        /// Pure-error sum of squares and its degrees of freedom `n − c`.
        pub fn pure_error(&self) -> (f64, u64) {
            let ss = self.levels().iter().map(|l| l.m2).sum();
            (ss, self.count() - self.level_count() as u64)
        }

        /// Lack-of-fit test of a straight line fitted to the same readings
        /// (with the same weights, if any).
        ///
        /// # Errors
        /// [`CalibError::CountMismatch`] if the fit holds a different number
        /// of readings; [`CalibError::TooFewLevels`] with two levels or
        /// fewer (one or fewer through the origin);
        /// [`CalibError::NoReplicates`]; [`CalibError::ZeroResidual`] when
        /// both sums of squares are zero.
        pub fn lack_of_fit_line(&self, fit: &LineFit) -> Result<LackOfFit, CalibError> {
            if fit.count != self.count() {
                return Err(CalibError::CountMismatch {
                    fit: fit.count,
                    levels: self.count(),
                });
            }
            let params = if fit.through_origin { 1 } else { 2 };
            analyse(self.levels(), params, |x| fit.fitted(x))
        }

        /// Lack-of-fit test of a polynomial `Σ cⱼ·xʲ` (coefficients in
        /// increasing power) fitted to the same readings by least squares.
        ///
        /// # Errors
        /// [`CalibError::InvalidCoefficientCount`] for an empty slice;
        /// [`CalibError::NonFinite`]; otherwise as
        /// [`lack_of_fit_line`](Self::lack_of_fit_line).
        pub fn lack_of_fit_poly(&self, coefficients: &[f64]) -> Result<LackOfFit, CalibError> {
            if coefficients.is_empty() {
                return Err(CalibError::InvalidCoefficientCount { found: 0 });
            }
            for (i, c) in coefficients.iter().enumerate() {
                if !c.is_finite() {
                    return Err(CalibError::NonFinite { index: i });
                }
            }
            analyse(self.levels(), coefficients.len(), |x| {
                horner(coefficients, x)
            })
        }

        /// Lack-of-fit test of any least-squares model with `params`
        /// parameters whose fitted value at `x` is `fitted(x)`.
        ///
        /// # Errors
        /// As [`lack_of_fit_line`](Self::lack_of_fit_line) without the count
        /// check, plus [`CalibError::NonFinite`] if `fitted` returns a
        /// non-finite value.
        pub fn lack_of_fit_with(
            &self,
            params: usize,
            fitted: impl Fn(f64) -> f64,
        ) -> Result<LackOfFit, CalibError> {
            analyse(self.levels(), params, fitted)
        }
    };
}

/// Replicate levels on the heap: any number of levels, kept sorted by `x`.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct LevelSet {
    levels: Vec<Level>,
}

impl LevelSet {
    /// An empty store.
    pub const fn new() -> Self {
        LevelSet { levels: Vec::new() }
    }

    fn as_slice(&self) -> &[Level] {
        &self.levels
    }

    fn levels_mut(&mut self) -> &mut [Level] {
        &mut self.levels
    }

    fn insert_at(&mut self, i: usize, l: Level) -> Result<(), CalibError> {
        self.levels.insert(i, l);
        Ok(())
    }

    fn extend_checked(
        &mut self,
        xs: &[f64],
        ys: &[f64],
        ws: Option<&[f64]>,
    ) -> Result<(), CalibError> {
        // Inputs are checked, but a sum may still overflow part-way: work
        // on a copy and commit at the end.
        let mut t = self.clone();
        for i in 0..xs.len() {
            t.push_weighted(xs[i], ys[i], ws.map_or(1.0, |w| w[i]))?;
        }
        *self = t;
        Ok(())
    }

    /// Merges another store's readings into this one (exact per-level
    /// merge).
    ///
    /// # Errors
    /// [`CalibError::Overflow`] if a level's sums or the reading count
    /// would overflow; the store is then unchanged.
    pub fn merge(&mut self, other: &LevelSet) -> Result<(), CalibError> {
        other
            .count()
            .checked_add(self.count())
            .ok_or(CalibError::Overflow)?;
        let mut t = self.clone();
        for o in &other.levels {
            match find(&t.levels, o.x) {
                Ok(i) => t.levels[i].absorb(o)?,
                Err(i) => t.levels.insert(i, *o),
            }
        }
        *self = t;
        Ok(())
    }

    /// A store holding `levels` (already checked: sorted, unique, sound).
    pub(crate) fn from_checked(levels: Vec<Level>) -> Self {
        LevelSet { levels }
    }

    level_methods!();
}

/// Replicate levels in place: at most `N` levels, no allocation.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct FixedLevels<const N: usize> {
    levels: [Level; N],
    len: usize,
}

impl<const N: usize> Default for FixedLevels<N> {
    fn default() -> Self {
        Self::new()
    }
}

impl<const N: usize> FixedLevels<N> {
    /// An empty store.
    pub const fn new() -> Self {
        FixedLevels {
            levels: [Level::EMPTY; N],
            len: 0,
        }
    }

    /// Maximum number of levels.
    pub const fn capacity(&self) -> usize {
        N
    }

    fn as_slice(&self) -> &[Level] {
        &self.levels[..self.len]
    }

    fn levels_mut(&mut self) -> &mut [Level] {
        &mut self.levels[..self.len]
    }

    fn insert_at(&mut self, i: usize, l: Level) -> Result<(), CalibError> {
        if self.len == N {
            return Err(CalibError::LevelCapacity { capacity: N });
        }
        self.levels.copy_within(i..self.len, i + 1);
        self.levels[i] = l;
        self.len += 1;
        Ok(())
    }

    fn extend_checked(
        &mut self,
        xs: &[f64],
        ys: &[f64],
        ws: Option<&[f64]>,
    ) -> Result<(), CalibError> {
        // The store may fill part-way: work on a copy and commit at the end.
        let mut t = *self;
        for i in 0..xs.len() {
            t.push_weighted(xs[i], ys[i], ws.map_or(1.0, |w| w[i]))?;
        }
        *self = t;
        Ok(())
    }

    /// Merges another store's readings into this one.
    ///
    /// # Errors
    /// [`CalibError::LevelCapacity`] if the union has more than `N` levels,
    /// [`CalibError::Overflow`] if a level's sums or the reading count
    /// would overflow; the store is then unchanged.
    pub fn merge<const M: usize>(&mut self, other: &FixedLevels<M>) -> Result<(), CalibError> {
        other
            .count()
            .checked_add(self.count())
            .ok_or(CalibError::Overflow)?;
        let mut t = *self;
        for o in other.as_slice() {
            match find(t.as_slice(), o.x) {
                Ok(i) => t.levels[i].absorb(o)?,
                Err(i) => t.insert_at(i, *o)?,
            }
        }
        *self = t;
        Ok(())
    }

    /// A store holding `levels` (already checked: sorted, unique, sound);
    /// `None` if there are more than `N`.
    pub(crate) fn from_checked(levels: impl ExactSizeIterator<Item = Level>) -> Option<Self> {
        if levels.len() > N {
            return None;
        }
        let mut s = Self::new();
        for (slot, l) in s.levels.iter_mut().zip(levels) {
            *slot = l;
            s.len += 1;
        }
        Some(s)
    }

    level_methods!();
}

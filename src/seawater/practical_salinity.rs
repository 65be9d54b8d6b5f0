//! Practical Salinity SP from conductivity (PSS-78, with the Hill et al. 1986 extension below SP 2), and its inverse.
//!
//! Equations: UNESCO (1981) Tech. Pap. Mar. Sci. 37 and Fofonoff & Millard (1983), UNESCO Tech. Pap. Mar.
//! Sci. 44 (Lewis & Perkin 1981 coefficients); low-salinity extension of Hill, Dauphinee & Woods (1986),
//! IEEE J. Oceanic Eng. 11, scaled by the "Hill ratio" at SP = 2 as TEOS-10 (IOC et al. 2010) applies it
//! so that the scale is continuous at SP = 2. Temperatures enter as ITS-90 and are converted to IPTS-68.
use serde::{Deserialize, Serialize};

use super::error::{
    check_conductivity, check_pressure, check_temperature, ScienceError, MAX_TEMPERATURE_C, MIN_TEMPERATURE_C,
};
use super::temperature_scale::t68_from_t90;

/// Where a Practical Salinity lies against PSS-78's validity range.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum SalinityRange {
    /// SP < 2: PSS-78 extended by Hill et al. (1986).
    HillExtension,
    /// 2 ≤ SP ≤ 42: PSS-78's own validity range.
    Pss78,
    /// SP > 42: beyond PSS-78's validity range (extrapolated; flagged).
    AboveRange,
}

/// Classifies SP against PSS-78's validity range (2-42; Hill et al. 1986 below 2).
pub fn salinity_range(practical_salinity: f64) -> SalinityRange {
    if practical_salinity < 2.0 {
        SalinityRange::HillExtension
    } else if practical_salinity <= 42.0 {
        SalinityRange::Pss78
    } else {
        SalinityRange::AboveRange
    }
}

/// Conductivity of standard seawater C(35, 15 °C IPTS-68, 0), mS/cm (Culkin & Smith 1980; TEOS-10 value).
pub const C3515_MS_CM: f64 = 42.914;

/// Highest sea pressure PSS-78 was fitted to, dbar (UNESCO 1981, Tech. Pap. Mar. Sci. 37).
pub const MAX_PRESSURE_DBAR: f64 = 10_000.0;

// PSS-78 coefficients, UNESCO Tech. Pap. Mar. Sci. 44 (Fofonoff & Millard 1983), p. 6-7.
const A0: f64 = 0.0080;
const A1: f64 = -0.1692;
const A2: f64 = 25.3851;
const A3: f64 = 14.0941;
const A4: f64 = -7.0261;
const A5: f64 = 2.7081;
const B0: f64 = 0.0005;
const B1: f64 = -0.0056;
const B2: f64 = -0.0066;
const B3: f64 = -0.0375;
const B4: f64 = 0.0636;
const B5: f64 = -0.0144;
const K: f64 = 0.0162;
const C0: f64 = 0.676_609_7;
const C1: f64 = 2.005_64e-2;
const C2: f64 = 1.104_259e-4;
const C3: f64 = -6.969_8e-7;
const C4: f64 = 1.003_1e-9;
const D1: f64 = 3.426e-2;
const D2: f64 = 4.464e-4;
const D3: f64 = 4.215e-1;
const D4: f64 = -3.107e-3;
const E1: f64 = 2.070e-5;
const E2: f64 = -6.370e-10;
const E3: f64 = 3.989e-15;

/// Temperature factor f(t) = (t − 15)/(1 + k(t − 15)) of ΔS in PSS-78 (UNESCO 1983, eq. for ΔS).
#[inline]
fn temperature_factor(t68: f64) -> f64 {
    let dt = t68 - 15.0;
    dt / (1.0 + K * dt)
}

/// rt(t) = C(35, t, 0)/C(35, 15, 0), PSS-78 (UNESCO 1983, p. 7).
#[inline(always)]
fn rt_lc(t68: f64) -> f64 {
    C0 + t68 * (C1 + t68 * (C2 + t68 * (C3 + t68 * C4)))
}

/// PSS-78 salinity S = Σ aᵢ Rt^(i/2) + f(t) Σ bᵢ Rt^(i/2) as a function of √Rt (UNESCO 1983, p. 6).
#[inline(always)]
fn pss78_of_rtx(rtx: f64, ft68: f64) -> f64 {
    let a = A0 + rtx * (A1 + rtx * (A2 + rtx * (A3 + rtx * (A4 + rtx * A5))));
    let b = B0 + rtx * (B1 + rtx * (B2 + rtx * (B3 + rtx * (B4 + rtx * B5))));
    a + ft68 * b
}

/// d(PSS-78 S)/d√Rt, the derivative of [`pss78_of_rtx`].
#[inline(always)]
fn dpss78_drtx(rtx: f64, ft68: f64) -> f64 {
    let a = A1 + rtx * (2.0 * A2 + rtx * (3.0 * A3 + rtx * (4.0 * A4 + rtx * 5.0 * A5)));
    let b = B1 + rtx * (2.0 * B2 + rtx * (3.0 * B3 + rtx * (4.0 * B4 + rtx * 5.0 * B5)));
    a + ft68 * b
}

/// Hill et al. (1986) correction a0/(1 + 1.5X + X²) + b0 f(t)/(1 + Y^½ + Y + Y^1.5), X = 400 Rt, Y = 100 Rt,
/// returned as numerator and denominator so callers can share one division.
#[inline(always)]
fn hill_correction_fraction(rtx: f64, ft68: f64) -> (f64, f64) {
    let x = 400.0 * rtx * rtx;
    let sqrt_y = 10.0 * rtx;
    let part1 = 1.0 + x * (1.5 + x);
    let part2 = 1.0 + sqrt_y * (1.0 + sqrt_y * (1.0 + sqrt_y));
    (A0 * part2 + B0 * ft68 * part1, part1 * part2)
}

/// Hill et al. (1986) correction subtracted from PSS-78 below SP 2 (see [`hill_correction_fraction`]).
#[inline]
fn hill_correction(rtx: f64, ft68: f64) -> f64 {
    let (num, den) = hill_correction_fraction(rtx, ft68);
    num / den
}

/// d/d√Rt of [`hill_correction`] (differentiated from Hill et al. 1986).
#[inline]
fn dhill_correction_drtx(rtx: f64, ft68: f64) -> f64 {
    let x = 400.0 * rtx * rtx;
    let sqrt_y = 10.0 * rtx;
    let part1 = 1.0 + x * (1.5 + x);
    let part2 = 1.0 + sqrt_y * (1.0 + sqrt_y * (1.0 + sqrt_y));
    let dpart1 = 800.0 * rtx * (1.5 + 2.0 * x);
    let dpart2 = 10.0 * (1.0 + sqrt_y * (2.0 + 3.0 * sqrt_y));
    -(A0 * dpart1 / (part1 * part1) + B0 * ft68 * dpart2 / (part2 * part2))
}

/// Starting estimate of √Rt at PSS-78 SP = 2: a cubic in t68 fitted by halotank to the exact root
/// over -3.1..45.1 °C (largest error 3.2e-5; checked by a unit test).
#[inline(always)]
fn rtx_at_sp2_start(t68: f64) -> f64 {
    0.264_145 + t68 * (1.9428e-4 + t68 * (-3.0254e-6 + t68 * 2.315e-8))
}

/// √Rt at which PSS-78 gives exactly SP = 2, for t68 in the accepted range (-3..45 °C).
///
/// Two Newton steps from [`rtx_at_sp2_start`]: with S″/(2S′) ≈ 2 there, a start error of 3.2e-5 falls to
/// ~2e-9 and then below 1e-17, under rounding (verified over the range by a unit test).
#[inline(always)]
fn rtx_at_sp2(t68: f64, ft68: f64) -> f64 {
    let mut rtx = rtx_at_sp2_start(t68);
    for _ in 0..2 {
        rtx -= (pss78_of_rtx(rtx, ft68) - 2.0) / dpss78_drtx(rtx, ft68);
    }
    rtx
}

/// The Hill ratio at SP = 2 and the √Rt at which PSS-78 gives SP = 2 (TEOS-10 `gsw_Hill_ratio_at_SP2`).
///
/// The ratio is 2 divided by the uncorrected Hill et al. (1986) value at that √Rt; multiplying the Hill
/// formula by it makes the extended scale meet PSS-78 exactly at SP = 2 (IOC et al. 2010, TEOS-10 Manual).
fn hill_ratio_at_sp2(t68: f64, ft68: f64) -> (f64, f64) {
    let rtx = rtx_at_sp2(t68, ft68);
    (2.0 / (2.0 - hill_correction(rtx, ft68)), rtx)
}

/// Practical Salinity from in-situ conductivity (mS/cm), temperature (°C ITS-90), sea pressure (dbar).
///
/// PSS-78 (UNESCO 1983) with R = C/C(35,15,0), C(35,15,0) = 42.9140 mS/cm; Hill et al. (1986) below SP 2.
/// SP = 0 for C = 0. For 0 < C below about 0.0008 mS/cm the extended scale dips below zero (to about
/// -2.4e-4) and the reading is refused with [`ScienceError::InvalidSalinity`] (TEOS-10's C library also
/// rejects it); only rounding residue within 1e-12 of zero is returned as 0.
/// Values above SP 42 are extrapolated; see [`salinity_range`].
#[inline]
pub fn practical_salinity_from_conductivity(
    conductivity_ms_cm: f64,
    temperature_c: f64,
    pressure_dbar: f64,
) -> Result<f64, ScienceError> {
    if !inputs_usable(conductivity_ms_cm, temperature_c, pressure_dbar) {
        return Err(input_error(conductivity_ms_cm, temperature_c, pressure_dbar));
    }
    checked_result(pss78_unchecked(
        conductivity_ms_cm / C3515_MS_CM,
        temperature_c,
        pressure_dbar,
    ))
}

/// Practical Salinity from the conductivity ratio R = C(S,t,p)/C(35,15,0), temperature (°C ITS-90), p (dbar).
///
/// PSS-78 (UNESCO 1983, Fofonoff & Millard) with the Hill et al. (1986) extension below SP 2.
#[inline]
pub fn practical_salinity_from_conductivity_ratio(
    conductivity_ratio: f64,
    temperature_c: f64,
    pressure_dbar: f64,
) -> Result<f64, ScienceError> {
    if !inputs_usable(conductivity_ratio, temperature_c, pressure_dbar) {
        return Err(input_error(conductivity_ratio, temperature_c, pressure_dbar));
    }
    checked_result(pss78_unchecked(conductivity_ratio, temperature_c, pressure_dbar))
}

/// One branch for the whole input check on the fast path (NaN fails every comparison).
#[inline(always)]
fn inputs_usable(conductivity: f64, temperature_c: f64, pressure_dbar: f64) -> bool {
    (0.0..f64::INFINITY).contains(&conductivity)
        && (MIN_TEMPERATURE_C..=MAX_TEMPERATURE_C).contains(&temperature_c)
        && (0.0..=MAX_PRESSURE_DBAR).contains(&pressure_dbar)
}

/// The typed error for inputs [`inputs_usable`] refused.
#[cold]
#[inline(never)]
fn input_error(conductivity: f64, temperature_c: f64, pressure_dbar: f64) -> ScienceError {
    match check_conductivity(conductivity)
        .and_then(|()| check_temperature_and_pressure(temperature_c, pressure_dbar))
    {
        Err(error) => error,
        // Unreachable while the two checks agree; still a typed error rather than a panic.
        Ok(()) => ScienceError::InvalidConductivity { value: conductivity },
    }
}

/// Checks temperature and pressure; refuses pressure above [`MAX_PRESSURE_DBAR`].
#[inline]
fn check_temperature_and_pressure(temperature_c: f64, pressure_dbar: f64) -> Result<(), ScienceError> {
    check_temperature(temperature_c)?;
    check_pressure(pressure_dbar)?;
    if pressure_dbar > MAX_PRESSURE_DBAR {
        return Err(ScienceError::InvalidParameter {
            name: "pressure_dbar",
            value: pressure_dbar,
            why: "is above 10 000 dbar, the upper limit of PSS-78",
        });
    }
    Ok(())
}

/// PSS-78 with the Hill extension, for inputs already checked by [`inputs_usable`].
#[inline(always)]
fn pss78_unchecked(r: f64, temperature_c: f64, p: f64) -> f64 {
    let t68 = t68_from_t90(temperature_c);
    // Rp = 1 + p(e1 + e2 p + e3 p²)/(1 + d1 t + d2 t² + (d3 + d4 t) R)   (UNESCO 1983, p. 7)
    // Rt = R/(Rp rt(t)),  f(t) = (t − 15)/(1 + k(t − 15)).
    // Written with a single division: Rt = R·den/((den + num)·rt) and f = dt/q share 1/(q·(den + num)·rt).
    let dt = t68 - 15.0;
    let q = 1.0 + K * dt;
    let den = 1.0 + t68 * (D1 + D2 * t68) + (D3 + D4 * t68) * r;
    let num = p * (E1 + p * (E2 + E3 * p));
    let s = (den + num) * rt_lc(t68);
    let inv = 1.0 / (q * s);
    let ft68 = dt * s * inv;
    let rt = r * den * q * inv;
    let rtx = rt.sqrt();
    let sp = pss78_of_rtx(rtx, ft68);
    if sp < 2.0 {
        hill_extended(sp, rtx, t68, ft68)
    } else {
        sp
    }
}

/// Hill et al. (1986) value for SP < 2, scaled by the Hill ratio at SP = 2 (TEOS-10 `gsw_SP_from_C`).
///
/// ratio · (S − n₁/d₁) with ratio = 2/(2 − n₂/d₂) is evaluated as 2(S d₁ − n₁) d₂ / ((2 d₂ − n₂) d₁).
#[inline(never)]
fn hill_extended(sp_pss78: f64, rtx: f64, t68: f64, ft68: f64) -> f64 {
    let (n1, d1) = hill_correction_fraction(rtx, ft68);
    let (n2, d2) = hill_correction_fraction(rtx_at_sp2(t68, ft68), ft68);
    2.0 * (sp_pss78 * d1 - n1) * d2 / ((2.0 * d2 - n2) * d1)
}

/// Accepts a computed SP, turning rounding residue just below 0 into 0 and refusing anything else unusable.
#[inline(always)]
fn checked_result(sp: f64) -> Result<f64, ScienceError> {
    if (0.0..f64::INFINITY).contains(&sp) {
        Ok(sp)
    } else {
        unusable_result(sp)
    }
}

/// Size of rounding residue at SP = 0 treated as 0 rather than refused (halotank choice; ~1e4 ulp of 0.008).
const ROUNDING_SP: f64 = 1e-12;

/// Slow path of [`checked_result`].
#[cold]
#[inline(never)]
fn unusable_result(sp: f64) -> Result<f64, ScienceError> {
    if (-ROUNDING_SP..0.0).contains(&sp) {
        // Rounding residue at the Hill formula's zero crossing, not a negative salinity.
        Ok(0.0)
    } else {
        Err(ScienceError::InvalidSalinity { value: sp })
    }
}

/// In-situ conductivity (mS/cm) from Practical Salinity, temperature (°C ITS-90), sea pressure (dbar).
///
/// Inverse of [`practical_salinity_from_conductivity`] by safeguarded Newton iteration on √Rt.
pub fn conductivity_from_practical_salinity(
    practical_salinity: f64,
    temperature_c: f64,
    pressure_dbar: f64,
) -> Result<f64, ScienceError> {
    Ok(C3515_MS_CM
        * conductivity_ratio_from_practical_salinity(practical_salinity, temperature_c, pressure_dbar)?)
}

/// Conductivity ratio R = C/C(35,15,0) from Practical Salinity, temperature (°C ITS-90), sea pressure (dbar).
///
/// Solves the PSS-78/Hill forward equation for √Rt, then R from Rt = R/(Rp(R) rt(t)), a quadratic in R.
pub fn conductivity_ratio_from_practical_salinity(
    practical_salinity: f64,
    temperature_c: f64,
    pressure_dbar: f64,
) -> Result<f64, ScienceError> {
    let sp = practical_salinity;
    if !sp.is_finite() || sp < 0.0 {
        return Err(ScienceError::InvalidSalinity { value: sp });
    }
    check_temperature_and_pressure(temperature_c, pressure_dbar)?;
    let t68 = t68_from_t90(temperature_c);
    let ft68 = temperature_factor(t68);
    let rtx = if sp >= 2.0 {
        solve_rtx_pss78(sp, ft68)?
    } else {
        solve_rtx_hill(sp, t68, ft68)?
    };
    let r = ratio_from_rt(rtx * rtx, t68, pressure_dbar);
    if r.is_finite() && r >= 0.0 {
        Ok(r)
    } else {
        Err(ScienceError::NoConvergence {
            what: "conductivity ratio from Practical Salinity",
        })
    }
}

/// √Rt with PSS-78 S(√Rt) = sp, for sp ≥ 2.
fn solve_rtx_pss78(sp: f64, ft68: f64) -> Result<f64, ScienceError> {
    // Bracket: S(0) = a0 + b0 f < 2 ≤ sp; widen the upper end until S > sp.
    let mut hi = 1.5;
    let mut doublings = 0;
    while pss78_of_rtx(hi, ft68) <= sp {
        hi *= 2.0;
        doublings += 1;
        if doublings > 3 {
            return Err(ScienceError::InvalidSalinity { value: sp });
        }
    }
    // SP ≈ 35 Rt near standard seawater: a starting √Rt within a few per cent.
    let guess = (sp / 35.0).sqrt();
    safeguarded_newton(guess, 0.0, hi, |x| {
        (pss78_of_rtx(x, ft68) - sp, dpss78_drtx(x, ft68))
    })
}

/// √Rt with Hill-extended S(√Rt) = sp, for 0 ≤ sp < 2 (on the rising branch of the Hill formula).
fn solve_rtx_hill(sp: f64, t68: f64, ft68: f64) -> Result<f64, ScienceError> {
    let (hill_ratio, rtx_at_sp2) = hill_ratio_at_sp2(t68, ft68);
    // Start on the rising branch: S ≈ 2 Rt/Rt(2) well above SP ~ 0.1, and never below √Rt = 0.01,
    // above the Hill formula's zero crossing (√Rt ≈ 0.0056).
    let guess = (rtx_at_sp2 * (sp / 2.0).sqrt()).max(0.01);
    safeguarded_newton(guess, 0.0, rtx_at_sp2, |x| {
        let value = hill_ratio * (pss78_of_rtx(x, ft68) - hill_correction(x, ft68)) - sp;
        let slope = hill_ratio * (dpss78_drtx(x, ft68) - dhill_correction_drtx(x, ft68));
        (value, slope)
    })
}

/// Newton's method kept inside a shrinking bracket [lo, hi] with g(lo) ≤ 0 < g(hi), bisecting when a step leaves it.
///
/// Returns the point where g changes sign from ≤ 0 to > 0.
fn safeguarded_newton(
    guess: f64,
    mut lo: f64,
    mut hi: f64,
    g: impl Fn(f64) -> (f64, f64),
) -> Result<f64, ScienceError> {
    const REL_TOL: f64 = 1e-14;
    let mut x = if guess > lo && guess < hi {
        guess
    } else {
        0.5 * (lo + hi)
    };
    for _ in 0..100 {
        let (value, slope) = g(x);
        if value == 0.0 {
            return Ok(x);
        }
        if value < 0.0 {
            lo = x;
        } else {
            hi = x;
        }
        let newton = x - value / slope;
        let next = if newton > lo && newton < hi {
            newton
        } else {
            0.5 * (lo + hi)
        };
        if (next - x).abs() <= REL_TOL * next.abs() || hi - lo <= REL_TOL * hi {
            return Ok(next);
        }
        x = next;
    }
    Err(ScienceError::NoConvergence {
        what: "PSS-78 inverse (conductivity from Practical Salinity)",
    })
}

/// R from Rt: R = rt(t)·Rt·Rp with Rp = 1 + c/(b + a R) (UNESCO 1983, p. 7), the positive root of
/// a R² + (b − a u) R − u (b + c) = 0 with u = rt(t)·Rt, written to avoid cancellation.
#[inline]
fn ratio_from_rt(rt: f64, t68: f64, p: f64) -> f64 {
    let aa = D3 + D4 * t68;
    let bb = 1.0 + t68 * (D1 + D2 * t68);
    let cc = p * (E1 + p * (E2 + E3 * p));
    let u = rt_lc(t68) * rt;
    let dd = bb - aa * u;
    let root = (dd * dd + 4.0 * aa * u * (bb + cc)).sqrt();
    if dd >= 0.0 {
        2.0 * u * (bb + cc) / (root + dd)
    } else {
        (root - dd) / (2.0 * aa)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::seawater::temperature_scale::t90_from_t68;

    #[test]
    fn unesco_1983_sal78_check_value() {
        // UNESCO Tech. Pap. Mar. Sci. 44 (Fofonoff & Millard 1983), SAL78 check value (from memory,
        // confirmed with Python `seawater` 3.3.5 sw.salt: 39.999996): R = 1.888091, T68 = 40 °C,
        // P = 10 000 dbar gives S = 40.0000. The published value has 4 decimals, so |ΔS| < 5e-5;
        // the T68 -> T90 -> T68 round trip changes T68 only by rounding (1e-14 °C, ~1e-15 in S).
        let sp = practical_salinity_from_conductivity_ratio(1.888_091, t90_from_t68(40.0), 10_000.0).unwrap();
        assert!((sp - 40.0).abs() < 5e-5, "sp = {sp}");
    }

    #[test]
    fn standard_seawater_defines_sp_35() {
        // PSS-78 definition (UNESCO 1981): R = 1 at T68 = 15 °C, p = 0 is SP = 35 (Σaᵢ = 35, Σbᵢ = 0).
        // The published rt(t) coefficients give rt(15) = 1.0000000019 rather than 1, which moves SP by
        // about -7e-8 (dS/dRt ≈ 39): hence 1e-7, not rounding-level tolerances.
        let sp = practical_salinity_from_conductivity(C3515_MS_CM, t90_from_t68(15.0), 0.0).unwrap();
        assert!((sp - 35.0).abs() < 1e-7, "sp = {sp}");
        let c = conductivity_from_practical_salinity(35.0, t90_from_t68(15.0), 0.0).unwrap();
        assert!((c / C3515_MS_CM - 1.0).abs() < 1e-8, "c = {c}");
    }

    #[test]
    fn zero_conductivity_is_zero_salinity() {
        // Hill et al. (1986): the extended scale passes through SP = 0 at Rt = 0.
        for t in [-3.0, 0.0, 10.0, 25.0, 45.0] {
            let sp = practical_salinity_from_conductivity(0.0, t, 0.0).unwrap();
            assert!(sp.abs() < 1e-15, "t = {t}: sp = {sp}");
        }
    }

    #[test]
    fn extension_is_continuous_at_sp_2() {
        // TEOS-10 (IOC et al. 2010): the Hill ratio makes the extended scale equal PSS-78 at SP = 2.
        for i in -300..=4500 {
            let t = f64::from(i) / 100.0;
            let t68 = t68_from_t90(t);
            let ft68 = temperature_factor(t68);
            let (ratio, rtx2) = hill_ratio_at_sp2(t68, ft68);
            assert!((pss78_of_rtx(rtx2, ft68) - 2.0).abs() < 1e-14, "t = {t}");
            let hill = ratio * (pss78_of_rtx(rtx2, ft68) - hill_correction(rtx2, ft68));
            assert!((hill - 2.0).abs() < 1e-14, "t = {t}: {hill}");
            // The forward function's fused form gives the same value at the seam.
            let fused = hill_extended(pss78_of_rtx(rtx2, ft68), rtx2, t68, ft68);
            assert!((fused - 2.0).abs() < 1e-14, "t = {t}: {fused}");
        }
    }

    #[test]
    fn two_newton_steps_reach_the_sp_2_root() {
        // The cubic start is within 3.3e-5 of the root over the accepted range (the bound the two-step
        // argument of rtx_at_sp2 relies on), and two steps agree with twenty to rounding.
        for i in -300..=4500 {
            let t68 = t68_from_t90(f64::from(i) / 100.0);
            let ft68 = temperature_factor(t68);
            let mut exact = rtx_at_sp2_start(t68);
            for _ in 0..20 {
                exact -= (pss78_of_rtx(exact, ft68) - 2.0) / dpss78_drtx(exact, ft68);
            }
            assert!((rtx_at_sp2_start(t68) - exact).abs() < 3.3e-5, "t68 = {t68}");
            assert!(
                (rtx_at_sp2(t68, ft68) - exact).abs() <= 4.0 * f64::EPSILON * exact,
                "t68 = {t68}"
            );
        }
    }

    #[test]
    fn hill_derivative_matches_finite_difference() {
        let ft68 = temperature_factor(5.0);
        for rtx in [0.004, 0.0055, 0.01, 0.05, 0.1, 0.2] {
            let h = 1e-6;
            let fd = (hill_correction(rtx + h, ft68) - hill_correction(rtx - h, ft68)) / (2.0 * h);
            assert!((fd - dhill_correction_drtx(rtx, ft68)).abs() < 1e-6 * fd.abs().max(1.0));
            let fd = (pss78_of_rtx(rtx + h, ft68) - pss78_of_rtx(rtx - h, ft68)) / (2.0 * h);
            assert!((fd - dpss78_drtx(rtx, ft68)).abs() < 1e-6 * fd.abs().max(1.0));
            // The extended scale S = ratio·(PSS-78 − correction) as the inverse solver differentiates it.
            let extended = |x: f64| pss78_of_rtx(x, ft68) - hill_correction(x, ft68);
            let fd = (extended(rtx + h) - extended(rtx - h)) / (2.0 * h);
            let analytic = dpss78_drtx(rtx, ft68) - dhill_correction_drtx(rtx, ft68);
            assert!((fd - analytic).abs() < 1e-6 * fd.abs().max(1.0));
        }
    }

    #[test]
    fn round_trip_across_the_scale() {
        for &sp in &[0.0, 1e-4, 0.01, 0.5, 1.999, 2.0, 2.001, 10.0, 35.0, 42.0, 50.0] {
            for &t in &[-3.0, 0.0, 12.0, 28.0, 45.0] {
                for &p in &[0.0, 5.0, 1000.0] {
                    let c = conductivity_from_practical_salinity(sp, t, p).unwrap();
                    let back = practical_salinity_from_conductivity(c, t, p).unwrap();
                    assert!((back - sp).abs() < 1e-12, "sp {sp} t {t} p {p}: {back}");
                }
            }
        }
    }

    #[test]
    fn below_the_hill_zero_crossing_is_refused() {
        // 0 < C < ~0.0008 mS/cm gives a slightly negative extended SP (Hill et al. 1986 form): refused.
        let err = practical_salinity_from_conductivity(0.0002, 10.0, 0.0).unwrap_err();
        assert!(matches!(err, ScienceError::InvalidSalinity { value } if value < 0.0));
    }

    #[test]
    fn bad_input_gives_typed_errors() {
        assert!(matches!(
            practical_salinity_from_conductivity(f64::NAN, 10.0, 0.0),
            Err(ScienceError::InvalidConductivity { .. })
        ));
        assert!(matches!(
            practical_salinity_from_conductivity(-1.0, 10.0, 0.0),
            Err(ScienceError::InvalidConductivity { .. })
        ));
        assert!(matches!(
            practical_salinity_from_conductivity(f64::INFINITY, 10.0, 0.0),
            Err(ScienceError::InvalidConductivity { .. })
        ));
        for t in [-3.01, 45.01, f64::NAN, f64::NEG_INFINITY] {
            assert!(matches!(
                practical_salinity_from_conductivity(40.0, t, 0.0),
                Err(ScienceError::TemperatureOutOfRange { .. })
            ));
            assert!(matches!(
                conductivity_from_practical_salinity(35.0, t, 0.0),
                Err(ScienceError::TemperatureOutOfRange { .. })
            ));
        }
        for p in [-0.1, f64::NAN, f64::INFINITY] {
            assert!(matches!(
                practical_salinity_from_conductivity(40.0, 10.0, p),
                Err(ScienceError::InvalidPressure { .. })
            ));
            assert!(matches!(
                conductivity_from_practical_salinity(35.0, 10.0, p),
                Err(ScienceError::InvalidPressure { .. })
            ));
        }
        assert!(matches!(
            practical_salinity_from_conductivity(40.0, 10.0, 10_000.1),
            Err(ScienceError::InvalidParameter {
                name: "pressure_dbar",
                ..
            })
        ));
        for sp in [-1e-9, f64::NAN, f64::INFINITY] {
            assert!(matches!(
                conductivity_from_practical_salinity(sp, 10.0, 0.0),
                Err(ScienceError::InvalidSalinity { .. })
            ));
        }
        // Far beyond any water: no bracket, refused rather than extrapolated without end.
        assert!(matches!(
            conductivity_from_practical_salinity(1e6, 10.0, 0.0),
            Err(ScienceError::InvalidSalinity { .. })
        ));
        // Absurdly large conductivity: a typed error, never NaN or infinity.
        let r = practical_salinity_from_conductivity(1e300, 10.0, 0.0);
        assert!(matches!(r, Err(ScienceError::InvalidSalinity { .. })), "{r:?}");
    }

    #[test]
    fn salinity_range_flags() {
        // PSS-78 validity 2 ≤ SP ≤ 42 (UNESCO 1981); Hill et al. (1986) below 2.
        assert_eq!(salinity_range(0.0), SalinityRange::HillExtension);
        assert_eq!(salinity_range(1.999_999), SalinityRange::HillExtension);
        assert_eq!(salinity_range(2.0), SalinityRange::Pss78);
        assert_eq!(salinity_range(35.0), SalinityRange::Pss78);
        assert_eq!(salinity_range(42.0), SalinityRange::Pss78);
        assert_eq!(salinity_range(42.000_001), SalinityRange::AboveRange);
        // The flag follows the computed SP of a reading.
        let sp = practical_salinity_from_conductivity(1.0, 20.0, 0.0).unwrap();
        assert_eq!(salinity_range(sp), SalinityRange::HillExtension);
        let sp = practical_salinity_from_conductivity(45.0, 20.0, 0.0).unwrap();
        assert_eq!(salinity_range(sp), SalinityRange::Pss78);
        let sp = practical_salinity_from_conductivity(65.0, 10.0, 0.0).unwrap();
        assert_eq!(salinity_range(sp), SalinityRange::AboveRange);
        assert_eq!(
            serde_json::to_string(&SalinityRange::HillExtension).unwrap(),
            "\"hill_extension\""
        );
    }
}

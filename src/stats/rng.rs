//! Seeded pseudo-random numbers for the bootstraps: a uniform generator, bounded integers, and
//! exact Binomial and Multinomial draws.
//!
//! Owns: the crate-internal [`Rng`] (xoshiro256++ seeded through SplitMix64), `Rng::binomial` and
//! `Rng::multinomial_from_counts`. Nothing outside `stats` sees these types; callers pass a `u64`
//! seed to a public bootstrap function and get the same interval back on every platform.
//!
//! Why written here rather than taken from `rand` / `rand_distr`: the promise is "same seed, same
//! interval, on every platform and after `cargo update`". `rand` does not promise value stability
//! for its small generators across versions, and `rand_distr` only uses the portable `libm`
//! functions when no other crate in the build turns on `num-traits/std` — which `statrs` (via
//! `nalgebra`) does in this build, so its Binomial sampler would call the platform's `ln`/`exp`,
//! whose last bit differs between C libraries. Here every transcendental call goes through the
//! pure-Rust `libm` crate (a port of musl's libm, bit-identical everywhere) and everything else is
//! IEEE-754 arithmetic, which Rust evaluates identically on every target.
//!
//! Must not: read the clock, the OS entropy source or any global state; loop without a cap (every
//! rejection loop gives up after [`MAX_REJECTIONS`] tries with an error, an event whose
//! probability is far below 1e-100 for a correct sampler).

use super::error::{Result, StatsError};

/// Cap on the rejection loops of the Binomial sampler. A BTRD draw is accepted with probability
/// above 0.5 on every try (Hörmann 1993 reports about 1.1 tries on average), so 1000 tries fail
/// with probability below 2⁻¹⁰⁰⁰: reaching the cap means a bug, not bad luck.
const MAX_REJECTIONS: u32 = 1000;

/// xoshiro256++ (Blackman & Vigna, "Scrambled linear pseudorandom number generators", ACM TOMS
/// 47(4), 2021), translated from the authors' reference C code `xoshiro256plusplus.c`; period
/// 2²⁵⁶ − 1. Seeded by four outputs of SplitMix64 (Steele, Lea & Flood, OOPSLA 2014), the seeding
/// the authors recommend, which never yields the forbidden all-zero state from a 64-bit seed.
#[derive(Debug, Clone)]
pub(crate) struct Rng {
    s: [u64; 4],
}

/// One SplitMix64 step (Steele, Lea & Flood 2014): advance by the golden-ratio increment, then mix.
fn splitmix64(state: &mut u64) -> u64 {
    *state = state.wrapping_add(0x9e37_79b9_7f4a_7c15);
    let mut z = *state;
    z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
    z ^ (z >> 31)
}

impl Rng {
    /// Generator seeded from one `u64` through SplitMix64.
    pub(crate) fn seed_from_u64(seed: u64) -> Self {
        let mut state = seed;
        let s = [
            splitmix64(&mut state),
            splitmix64(&mut state),
            splitmix64(&mut state),
            splitmix64(&mut state),
        ];
        Self { s }
    }

    /// Generator with the raw 256-bit state (tests against the reference implementation only).
    #[cfg(test)]
    fn from_state(s: [u64; 4]) -> Self {
        Self { s }
    }

    /// Next 64 random bits (xoshiro256++ step).
    pub(crate) fn next_u64(&mut self) -> u64 {
        let result = self.s[0]
            .wrapping_add(self.s[3])
            .rotate_left(23)
            .wrapping_add(self.s[0]);
        let t = self.s[1] << 17;
        self.s[2] ^= self.s[0];
        self.s[3] ^= self.s[1];
        self.s[1] ^= self.s[2];
        self.s[0] ^= self.s[3];
        self.s[2] ^= t;
        self.s[3] = self.s[3].rotate_left(45);
        result
    }

    /// Uniform on [0, 1) with 53 random bits: the top 53 bits times 2⁻⁵³ (exact in f64).
    pub(crate) fn uniform(&mut self) -> f64 {
        (self.next_u64() >> 11) as f64 * (1.0 / (1u64 << 53) as f64)
    }

    /// Integer in [0, n) for n ≥ 1 by the multiply-shift map ⌊x·n / 2⁶⁴⌋ (Lemire 2019, ACM TOMS
    /// 29(1), without the rejection step). Skipping the rejection keeps the cost fixed; the bias is
    /// at most n / 2⁶⁴ per value (below 1e-12 for n ≤ 1e7), far under bootstrap Monte Carlo noise.
    pub(crate) fn below(&mut self, n: u64) -> u64 {
        ((u128::from(self.next_u64()) * u128::from(n)) >> 64) as u64
    }

    /// An exact draw from Binomial(n, p).
    ///
    /// p > ½ is reduced to n − Binomial(n, 1 − p). Then, with p ≤ ½:
    /// - n·p < 10: sequential inversion from 0 (Kachitvichyanukul & Schmeiser 1988, "Binomial
    ///   random variate generation", Commun. ACM 31:216–222, algorithm BINV); its loop is capped
    ///   at n + 1 steps, and the rare round-off leftover restarts the draw (capped too).
    /// - n·p ≥ 10: Hörmann's transformed rejection with decomposition, BTRD (W. Hörmann 1993, "The
    ///   generation of binomial random variates", J. Statist. Comput. Simul. 46:101–110), whose
    ///   cost does not grow with n.
    ///
    /// Errors: p outside [0, 1] or NaN; a rejection loop reaching its cap (a bug).
    pub(crate) fn binomial(&mut self, n: u64, p: f64) -> Result<u64> {
        if !(0.0..=1.0).contains(&p) {
            return Err(StatsError::OutOfRange {
                name: "p",
                value: p,
                expected: "in [0, 1]",
            });
        }
        if n == 0 || p == 0.0 {
            return Ok(0);
        }
        if p == 1.0 {
            return Ok(n);
        }
        if p > 0.5 {
            return Ok(n - self.binomial_low(n, 1.0 - p)?);
        }
        self.binomial_low(n, p)
    }

    /// Binomial(n, p) for 0 < p ≤ ½ and n ≥ 1.
    fn binomial_low(&mut self, n: u64, p: f64) -> Result<u64> {
        if n as f64 * p < 10.0 {
            self.binomial_inversion(n, p)
        } else {
            self.binomial_btrd(n, p)
        }
    }

    /// BINV (Kachitvichyanukul & Schmeiser 1988): walk the pmf from 0, f(x+1) = f(x)·(a/(x+1) − s)
    /// with s = p/q and a = (n + 1)s, until the uniform is used up. n·p < 10 keeps
    /// f(0) = qⁿ ≥ e^(−14) (p ≤ ½), so it never underflows.
    fn binomial_inversion(&mut self, n: u64, p: f64) -> Result<u64> {
        let q = 1.0 - p;
        let s = p / q;
        let a = (n as f64 + 1.0) * s;
        let f0 = libm::exp(n as f64 * libm::log1p(-p));
        for _ in 0..MAX_REJECTIONS {
            let mut u = self.uniform();
            let mut f = f0;
            let mut x: u64 = 0;
            loop {
                if u < f {
                    return Ok(x);
                }
                u -= f;
                if x == n || f <= 0.0 {
                    // The pmf summed to slightly less than u through round-off, or it underflowed
                    // past the mode (every later term is 0 too, and n can be 1e18): draw again.
                    break;
                }
                x += 1;
                f *= a / x as f64 - s;
            }
        }
        Err(StatsError::NoConvergence {
            what: "binomial inversion sampler",
        })
    }

    /// BTRD (Hörmann 1993, steps 0–3.4 as numbered in the paper) for 0 < p ≤ ½, n·p ≥ 10.
    fn binomial_btrd(&mut self, n: u64, p: f64) -> Result<u64> {
        // Step 0: set-up.
        let nf = n as f64;
        let q = 1.0 - p;
        let m = ((nf + 1.0) * p).floor();
        let r = p / q;
        let nr = (nf + 1.0) * r;
        let npq = nf * p * q;
        let spq = npq.sqrt();
        let b = 1.15 + 2.53 * spq;
        let a = -0.0873 + 0.0248 * b + 0.01 * p;
        let c = nf * p + 0.5;
        let alpha = (2.83 + 5.1 / b) * spq;
        let v_r = 0.92 - 4.2 / b;
        let u_r_v_r = 0.86 * v_r;
        for _ in 0..MAX_REJECTIONS {
            // Step 1: the central box, accepted without evaluating the pmf.
            let mut v = self.uniform();
            if v <= u_r_v_r {
                let u = v / v_r - 0.43;
                let k = ((2.0 * a / (0.5 - u.abs()) + b) * u + c).floor();
                // The box lies inside [0, n] for n·p ≥ 10 (Hörmann 1993); the check only keeps a
                // round-off surprise from ever returning a count above n.
                if (0.0..=nf).contains(&k) {
                    return Ok(k as u64);
                }
                continue;
            }
            // Step 2: generate (u, v) for the rejection step.
            let u = if v >= v_r {
                self.uniform() - 0.5
            } else {
                let u = v / v_r - 0.93;
                v = self.uniform() * v_r;
                0.5f64.copysign(u) - u
            };
            // Step 3.0.
            let us = 0.5 - u.abs();
            let k = ((2.0 * a / us + b) * u + c).floor();
            if k < 0.0 || k > nf {
                continue;
            }
            v = v * alpha / (a / (us * us) + b);
            let km = (k - m).abs();
            if km <= 15.0 {
                // Step 3.1: f(k)/f(m) by the pmf recursion (at most 15 factors).
                let (ki, mi) = (k as u64, m as u64);
                let mut f = 1.0;
                if mi < ki {
                    for i in (mi + 1)..=ki {
                        f *= nr / i as f64 - r;
                    }
                } else {
                    for i in (ki + 1)..=mi {
                        v *= nr / i as f64 - r;
                    }
                }
                if v <= f {
                    return Ok(ki);
                }
                continue;
            }
            // Step 3.2: squeeze on ln v.
            let ln_v = libm::log(v);
            let rho = (km / npq) * (((km / 3.0 + 0.625) * km + 1.0 / 6.0) / npq + 0.5);
            let t = -km * km / (2.0 * npq);
            if ln_v < t - rho {
                return Ok(k as u64);
            }
            if ln_v > t + rho {
                continue;
            }
            // Steps 3.3–3.4: the final acceptance test with the Stirling corrections.
            let nm = nf - m + 1.0;
            let h = (m + 0.5) * libm::log((m + 1.0) / (r * nm))
                + stirling_tail(m)
                + stirling_tail(nf - m);
            let nk = nf - k + 1.0;
            let bound =
                h + (nf + 1.0) * libm::log(nm / nk) + (k + 0.5) * libm::log(nk * r / (k + 1.0))
                    - stirling_tail(k)
                    - stirling_tail(nf - k);
            if ln_v <= bound {
                return Ok(k as u64);
            }
        }
        Err(StatsError::NoConvergence {
            what: "binomial BTRD sampler",
        })
    }

    /// Fills `out` with one Multinomial(Σ counts, counts / Σ counts) draw, by the conditional
    /// Binomial method: cell i gets Binomial(rows left, countᵢ / counts left over cells i..).
    /// The ratio is formed from integer counts each time, so no probability mass drifts.
    /// Cost: one Binomial draw per non-empty cell, independent of the row count.
    pub(crate) fn multinomial_from_counts(
        &mut self,
        counts: &[u64],
        out: &mut [u64],
    ) -> Result<()> {
        let mut rows_left: u64 = counts.iter().sum();
        let mut mass_left = rows_left;
        for (cell, &count) in out.iter_mut().zip(counts) {
            if count == 0 || rows_left == 0 {
                *cell = 0;
                mass_left -= count;
                continue;
            }
            let draw = if count == mass_left {
                rows_left
            } else {
                self.binomial(rows_left, count as f64 / mass_left as f64)?
            };
            *cell = draw;
            rows_left -= draw;
            mass_left -= count;
        }
        Ok(())
    }
}

/// Stirling-series remainder fc(k) = ln k! − [(k + ½) ln(k + 1) − (k + 1) + ½ ln 2π], as used by
/// BTRD (Hörmann 1993). Below 10 it is computed directly from ln k! (at most nine logarithms);
/// from 10 on by the series 1/12 − 1/(360 (k+1)²) + 1/(1260 (k+1)⁴) − 1/(1680 (k+1)⁶), over
/// (k + 1) (Abramowitz & Stegun 1964, 6.1.41), whose next term is below 4e-13 there.
fn stirling_tail(k: f64) -> f64 {
    let k1 = k + 1.0;
    if k < 10.0 {
        let mut ln_factorial = 0.0;
        let mut i = 2.0;
        while i <= k {
            ln_factorial += libm::log(i);
            i += 1.0;
        }
        let half_ln_2pi = 0.5 * libm::log(2.0 * std::f64::consts::PI);
        return ln_factorial - ((k + 0.5) * libm::log(k1) - k1 + half_ln_2pi);
    }
    let inv_sq = 1.0 / (k1 * k1);
    (1.0 / 12.0 - (1.0 / 360.0 - (1.0 / 1260.0 - inv_sq / 1680.0) * inv_sq) * inv_sq) / k1
}

#[cfg(test)]
#[allow(clippy::unwrap_used)]
mod tests {
    use super::*;
    use crate::stats::binomial_sf_ge;

    #[test]
    fn matches_the_reference_implementation() {
        // Outputs of Blackman & Vigna's reference `xoshiro256plusplus.c` from the state
        // {1, 2, 3, 4}, as listed in the `rand` 0.10.4 crate's test of its own port.
        let mut rng = Rng::from_state([1, 2, 3, 4]);
        let expected: [u64; 10] = [
            41943041,
            58720359,
            3588806011781223,
            3591011842654386,
            9228616714210784205,
            9973669472204895162,
            14011001112246962877,
            12406186145184390807,
            15849039046786891736,
            10450023813501588000,
        ];
        for e in expected {
            assert_eq!(rng.next_u64(), e);
        }
        // SplitMix64 seeding of 0, same source (rand's `seed_from_u64(0)` test).
        let mut rng = Rng::seed_from_u64(0);
        assert_eq!(rng.next_u64(), 5987356902031041503);
        assert_eq!(rng.next_u64(), 7051070477665621255);
    }

    #[test]
    fn stirling_tail_is_continuous_at_the_switch() {
        // fc(k) ≈ 1/(12(k+1)) (A&S 6.1.41, first term); both branches must agree near k = 10.
        let direct: f64 = (2..=10).map(|i| (i as f64).ln()).sum::<f64>()
            - (10.5 * 11f64.ln() - 11.0 + 0.5 * (2.0 * std::f64::consts::PI).ln());
        assert!((stirling_tail(10.0) - direct).abs() < 1e-12);
        // fc(0) = 1 − ½ ln 2π in closed form (ln 0! = 0).
        let closed = 1.0 - 0.5 * (2.0 * std::f64::consts::PI).ln();
        assert!((stirling_tail(0.0) - closed).abs() < 1e-15);
    }

    /// Draws `draws` values of Binomial(n, p) and checks every cell's count against the exact pmf
    /// (from the incomplete beta, checked against scipy elsewhere) within 5 standard deviations,
    /// plus a chi-square over all cells with expected count ≥ 5 against a 1e-6 critical value.
    fn check_distribution(n: u64, p: f64, seed: u64) {
        let draws = 20_000u64;
        let mut rng = Rng::seed_from_u64(seed);
        let mut counts = vec![0u64; n as usize + 1];
        for _ in 0..draws {
            let x = rng.binomial(n, p).unwrap();
            assert!(x <= n);
            counts[x as usize] += 1;
        }
        let mut chi2 = 0.0;
        let mut cells = 0;
        for (k, &obs) in counts.iter().enumerate() {
            let k = k as u64;
            let pmf = binomial_sf_ge(k, n, p).unwrap() - binomial_sf_ge(k + 1, n, p).unwrap();
            let expected = draws as f64 * pmf;
            let sd = (expected * (1.0 - pmf)).sqrt();
            assert!(
                (obs as f64 - expected).abs() <= 5.0 * sd + 1.0,
                "n={n} p={p} k={k}: {obs} vs {expected}"
            );
            if expected >= 5.0 {
                chi2 += (obs as f64 - expected).powi(2) / expected;
                cells += 1;
            }
        }
        // Wilson–Hilferty: χ²_df upper 1e-6 point ≈ df(1 − 2/(9df) + 4.753·√(2/(9df)))³,
        // z(1e-6) = 4.753 (common practice, no source).
        let df = f64::from(cells - 1);
        let h = 2.0 / (9.0 * df);
        let critical = df * (1.0 - h + 4.753 * h.sqrt()).powi(3);
        assert!(chi2 < critical, "n={n} p={p}: chi2 {chi2} over {critical}");
    }

    #[test]
    fn binomial_draws_follow_the_binomial_pmf() {
        check_distribution(20, 0.2, 1); // inversion
        check_distribution(40, 0.3, 2); // BTRD, km ≤ 15 path mostly
        check_distribution(500, 0.45, 3); // BTRD with squeeze and final test
        check_distribution(60, 0.9, 4); // p > ½ flipped, inversion
        check_distribution(2000, 0.7, 5); // p > ½ flipped, BTRD
    }

    #[test]
    fn binomial_edges_and_large_n() {
        let mut rng = Rng::seed_from_u64(9);
        assert_eq!(rng.binomial(0, 0.3).unwrap(), 0);
        assert_eq!(rng.binomial(10, 0.0).unwrap(), 0);
        assert_eq!(rng.binomial(10, 1.0).unwrap(), 10);
        assert!(rng.binomial(10, f64::NAN).is_err());
        assert!(rng.binomial(10, 1.5).is_err());
        // At n = 1e9 (BTRD's Stirling-corrected acceptance test): the mean of 2000 draws within 5
        // standard errors of n·p, and their variance within 5 standard errors (≈ npq·√(2/1999),
        // normal theory) of npq (common practice, no source).
        let (n, p) = (1_000_000_000u64, 0.25);
        let draws: Vec<f64> = (0..2000)
            .map(|_| rng.binomial(n, p).unwrap() as f64)
            .collect();
        let mean = draws.iter().sum::<f64>() / 2000.0;
        let npq = n as f64 * p * (1.0 - p);
        assert!((mean - n as f64 * p).abs() < 5.0 * (npq / 2000.0).sqrt());
        let var = draws.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / 1999.0;
        assert!((var - npq).abs() < 5.0 * npq * (2.0f64 / 1999.0).sqrt());
    }

    #[test]
    fn multinomial_keeps_the_total_and_empty_cells() {
        let mut rng = Rng::seed_from_u64(11);
        let counts = [5, 0, 120, 7, 0, 1];
        let mut out = [0u64; 6];
        for _ in 0..200 {
            rng.multinomial_from_counts(&counts, &mut out).unwrap();
            assert_eq!(out.iter().sum::<u64>(), 133);
            assert_eq!((out[1], out[4]), (0, 0));
        }
    }
}

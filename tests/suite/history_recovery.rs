//! Recovery of known k and V by the dose-history fit: levels simulated over irregular dose
//! records with 10 % proportional noise (seeded), checked for bias and for the coverage of the
//! 95 % intervals. Self-consistency checks: the truth is set in the test.

use ebb::core::history::fit_points;
use ebb::core::model::{self, Administration, Route};
use rand::rngs::StdRng;
use rand::{RngExt, SeedableRng};
use rand_distr::{Distribution, StandardNormal};

/// One simulated patient: the truth, the dose record and the noisy levels.
struct Sim {
    k: f64,
    v: f64,
    doses: Vec<Administration>,
    points: Vec<(f64, f64)>,
}

/// How the 10 % proportional error enters.
#[derive(Clone, Copy)]
enum Noise {
    /// measured = model × e^(0.1·ε): the error model the fit assumes (CV 10.03 %).
    LogNormal,
    /// measured = model × (1 + 0.1·ε): 10 % of the level, symmetric on the natural scale.
    Linear,
}

/// An irregular dose record (late and early doses, varying amounts, infusions and boluses)
/// and 4 to 6 levels drawn at random times across it, each with 10 % proportional error
/// (ε standard normal).
fn simulate(rng: &mut StdRng, noise: Noise) -> Sim {
    let k = (rng.random_range(0.04f64.ln()..0.35f64.ln())).exp();
    let v = rng.random_range(15.0..70.0);
    let tau = [8.0, 12.0, 24.0][rng.random_range(0..3)];
    let n_doses = rng.random_range(3..=6);
    let base = rng.random_range(500.0..1500.0);
    let mut doses = Vec::new();
    let mut t = 0.0;
    for _ in 0..n_doses {
        let route = if rng.random_bool(0.6) {
            Route::Infusion {
                hours: rng.random_range(0.5..1.5),
            }
        } else {
            Route::Bolus
        };
        doses.push(Administration {
            t,
            amount_mg: base * rng.random_range(0.75..1.25),
            route,
        });
        t += tau * rng.random_range(0.8..1.25);
    }
    let first_end = doses[0].end();
    let last = doses[doses.len() - 1].t;
    let n_levels = rng.random_range(4..=6);
    // One level at a random time in each of n equal stretches of the record, as levels are
    // drawn across a course of treatment.
    let (from, to) = (first_end + 0.5, last + tau);
    let width = (to - from) / n_levels as f64;
    let times: Vec<f64> = (0..n_levels)
        .map(|i| from + width * (i as f64 + rng.random_range(0.0..1.0)))
        .collect();
    let points = times
        .into_iter()
        .map(|t| {
            let e: f64 = StandardNormal.sample(rng);
            let c = model::superpose(&doses, k, v, t);
            let factor = match noise {
                Noise::LogNormal => (0.1 * e).exp(),
                Noise::Linear => (1.0 + 0.1 * e).max(0.05),
            };
            (t, c * factor)
        })
        .collect();
    Sim {
        k,
        v,
        doses,
        points,
    }
}

fn covers(r: [f64; 2], x: f64) -> bool {
    r[0] <= x && x <= r[1]
}

/// Fit `runs` simulations; per parameter (k, V, CL): the share of 95 % intervals holding the
/// truth, the mean of ln(estimate/truth) and the median of estimate/truth − 1. Refusals count
/// as misses.
fn run(seed: u64, runs: usize, noise: Noise) -> [(f64, f64, f64); 3] {
    let mut rng = StdRng::seed_from_u64(seed);
    let mut hits = [0usize; 3];
    let mut logs: [Vec<f64>; 3] = Default::default();
    for _ in 0..runs {
        let sim = simulate(&mut rng, noise);
        let Ok(s) = fit_points(&sim.doses, &sim.points) else {
            continue;
        };
        let sp = s.spread.expect("an interval with four or more levels");
        let grads = [[1.0, 0.0], [0.0, 1.0], [1.0, 1.0]];
        let est = [s.k, s.v, s.k * s.v];
        let truth = [sim.k, sim.v, sim.k * sim.v];
        for p in 0..3 {
            hits[p] += covers(sp.interval(est[p], grads[p]), truth[p]) as usize;
            logs[p].push((est[p] / truth[p]).ln());
        }
    }
    [0, 1, 2].map(|p| {
        let mut l = logs[p].clone();
        l.sort_by(f64::total_cmp);
        (
            hits[p] as f64 / runs as f64,
            l.iter().sum::<f64>() / l.len() as f64,
            l[l.len() / 2].exp() - 1.0,
        )
    })
}

const NAMES: [&str; 3] = ["k", "V", "CL"];

#[test]
fn intervals_cover_the_truth_in_93_to_97_percent_of_1000() {
    // The seed only makes the run repeatable. When this test was written, seeds 1 to 8 (1000
    // simulations each) gave coverages of 0.936 to 0.956 for k, V and CL, and 16 000
    // simulations gave about 0.948; a first trial seed, 20270302, gave 0.930 for V, at the edge
    // of the band, as 1000 binomial draws at 0.948 (SD 0.007) will now and then. Mean ln ratios
    // ran from -0.019 to +0.008: a small downward lean of k with 4 to 6 levels.
    for (name, (coverage, mean_log, median_rel)) in NAMES.iter().zip(run(1, 1000, Noise::LogNormal))
    {
        assert!(
            (0.93..=0.97).contains(&coverage),
            "{name}: 95 % intervals held the truth in {coverage} of 1000"
        );
        assert!(mean_log.abs() < 0.025, "{name}: mean ln ratio {mean_log}");
        assert!(
            median_rel.abs() < 0.01,
            "{name}: median relative error {median_rel}"
        );
    }
}

#[test]
fn estimates_are_unbiased_with_linear_proportional_noise() {
    // ln(1 + 0.1·ε) has mean about -0.005: V (and so CL) may lean high by about that much.
    for (name, (coverage, mean_log, median_rel)) in NAMES.iter().zip(run(31, 1000, Noise::Linear)) {
        assert!(mean_log.abs() < 0.025, "{name}: mean ln ratio {mean_log}");
        assert!(
            median_rel.abs() < 0.015,
            "{name}: median relative error {median_rel}"
        );
        assert!(coverage > 0.92, "{name}: coverage {coverage}");
    }
}

#[test]
fn noisier_levels_give_wider_intervals() {
    // The same design, with the noise scaled: the SE of ln k grows with it.
    let mut rng = StdRng::seed_from_u64(7);
    let sim = simulate(&mut rng, Noise::LogNormal);
    let ses: Vec<f64> = [0.02, 0.1, 0.3]
        .iter()
        .map(|&scale| {
            let mut r = StdRng::seed_from_u64(11);
            let pts: Vec<(f64, f64)> = sim
                .points
                .iter()
                .map(|&(t, _)| {
                    let e: f64 = StandardNormal.sample(&mut r);
                    (
                        t,
                        model::superpose(&sim.doses, sim.k, sim.v, t) * (scale * e).exp(),
                    )
                })
                .collect();
            fit_points(&sim.doses, &pts)
                .unwrap()
                .spread
                .unwrap()
                .se_ln_k()
        })
        .collect();
    assert!(ses[0] < ses[1] && ses[1] < ses[2], "{ses:?}");
}

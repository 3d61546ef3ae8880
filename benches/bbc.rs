//! Timing of BBC-CV and of the effective number of configurations on a generated search (run by
//! `scripts/bench_bbc.sh`, which puts the numpy reference beside it). Not a test: it asserts
//! nothing and prints one JSON line.
//!
//! Usage: `cargo bench --bench bbc -- DATA_FILE CONFIGS ROWS RESAMPLES`. Writes the generated
//! correctness matrix to DATA_FILE (CONFIGS × ROWS bytes, 0/1, configuration by configuration) so
//! the reference implementation can run on the same data.
#![allow(clippy::print_stdout, clippy::unwrap_used)]

use std::time::Instant;

use vetscore::stats::{
    CorrectnessMatrix, OofResults, bbc_cv, effective_configurations_of_correctness,
};

/// SplitMix64 (Steele, Lea & Flood 2014) as a small stand-alone data generator.
fn next(state: &mut u64) -> u64 {
    *state = state.wrapping_add(0x9e37_79b9_7f4a_7c15);
    let mut z = *state;
    z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
    z ^ (z >> 31)
}

fn uniform(state: &mut u64) -> f64 {
    (next(state) >> 11) as f64 / (1u64 << 53) as f64
}

fn main() {
    let args: Vec<String> = std::env::args()
        .skip(1)
        .filter(|a| a != "--bench")
        .collect();
    let path = &args[0];
    let configs: usize = args[1].parse().unwrap();
    let rows: usize = args[2].parse().unwrap();
    let resamples: u32 = args[3].parse().unwrap();

    // A search whose configurations share the rows' difficulty (correlated correctness) and
    // differ a little in skill: correct when ½·difficulty + ½·own noise < skill.
    let mut state = 2018u64;
    let difficulty: Vec<f64> = (0..rows).map(|_| uniform(&mut state)).collect();
    let mut bytes = vec![0u8; configs * rows];
    let mut matrix = CorrectnessMatrix::new(configs, rows);
    for c in 0..configs {
        let skill = 0.62 + 0.0004 * c as f64;
        for (i, d) in difficulty.iter().enumerate() {
            if 0.5 * d + 0.5 * uniform(&mut state) < skill {
                bytes[c * rows + i] = 1;
                matrix.set(c, i);
            }
        }
    }
    std::fs::write(path, &bytes).unwrap();

    let results = OofResults::Correctness(&matrix);
    let start = Instant::now();
    let two = bbc_cv(results, resamples, 0.95, 7, 2).unwrap();
    let seconds_two = start.elapsed().as_secs_f64();
    let start = Instant::now();
    let one = bbc_cv(results, resamples, 0.95, 7, 1).unwrap();
    let seconds_one = start.elapsed().as_secs_f64();
    assert_eq!(one.estimate.to_bits(), two.estimate.to_bits());
    let start = Instant::now();
    let effective = effective_configurations_of_correctness(&matrix).unwrap();
    let seconds_effective = start.elapsed().as_secs_f64();
    println!(
        "{{\"estimate\": {}, \"spread\": {}, \"resamples\": {}, \"selected_score\": {}, \
         \"lower\": {}, \"upper\": {}, \"seconds\": {seconds_two}, \"seconds_one_thread\": \
         {seconds_one}, \"li_ji\": {}, \"galwey\": {}, \"seconds_effective\": {seconds_effective}}}",
        two.estimate,
        two.spread,
        two.resamples_used,
        two.selected_score,
        two.interval.lower,
        two.interval.upper,
        effective.li_ji,
        effective.galwey
    );
}

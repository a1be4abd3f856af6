//! Time per simulated switching cycle of the exact and the reference
//! engine on the same scenarios, against an arithmetic floor, heap
//! allocations per cycle, and the steady-state solvers (shooting against
//! cycling) on a slowly settling design.
//!
//! Run with `cargo bench --bench engine`. Each scenario is first run to
//! steady state; the benchmark then times further unrecorded cycles. A
//! counting global allocator reports allocations per cycle alongside, and
//! one-run ratios (same binary, same scenario, back to back) are printed
//! for each scenario: reference / exact, and exact / floor, where the
//! floor is the least arithmetic a cycle of a two-state buck can cost —
//! two closed-form 2x2 matrix exponentials (the on-time's threshold
//! search, at its best two trajectory evaluations) and one precomputed
//! affine update (the fixed off-time). The floor figures are each the
//! least of many short batches, the floor's and the engine's taken in
//! turn (see `BATCHES`), since the machines these run on are shared; event
//! recording is timed with a bounded recorder already in use (as a long
//! start-up recording runs) and with every sample kept in fresh memory.

use chopwave_suite::{allocations, CountingAlloc};
use criterion::{criterion_group, criterion_main, Criterion};
use sim_core::exact::engine::ExactEngine;
use sim_core::record::Recorder;
use sim_core::reference::ReferenceEngine;
use sim_core::scenario::{JacobianSource, SteadyMethod};
use sim_core::{model::seam::CycleEngine, run::drive::simulate, run::RunOptions};
use std::hint::black_box;
use std::time::{Duration, Instant};

#[global_allocator]
static GLOBAL: CountingAlloc = CountingAlloc;

fn settled<E: CycleEngine>(mut e: E, cycles: usize) -> E {
    for _ in 0..cycles {
        e.run_cycle(None, None).expect("cycle");
    }
    e
}

fn allocations_per_cycle<E: CycleEngine>(e: &mut E, cycles: u64) -> f64 {
    let before = allocations();
    for _ in 0..cycles {
        e.run_cycle(None, None).expect("cycle");
    }
    (allocations() - before) as f64 / cycles as f64
}

fn per_cycle(c: &mut Criterion) {
    let mut group = c.benchmark_group("cycle");
    group
        .sample_size(20)
        .warm_up_time(Duration::from_millis(500))
        .measurement_time(Duration::from_secs(2));
    for s in chopwave_suite::realistic_set() {
        let mut exact = settled(ExactEngine::new(&s), 200);
        println!(
            "{}: exact engine {:.2} heap allocations per cycle",
            s.name,
            allocations_per_cycle(&mut exact, 1000)
        );
        let mut reference = settled(ReferenceEngine::new(&s), 60);
        println!(
            "{}: reference engine {:.1} heap allocations per cycle",
            s.name,
            allocations_per_cycle(&mut reference, 20)
        );
        // One-run ratio, back to back, so machine noise cancels.
        let t = Instant::now();
        for _ in 0..2000 {
            exact.run_cycle(None, None).expect("cycle");
        }
        let t_exact = t.elapsed().as_secs_f64() / 2000.0;
        let t = Instant::now();
        for _ in 0..100 {
            reference.run_cycle(None, None).expect("cycle");
        }
        let t_ref = t.elapsed().as_secs_f64() / 100.0;
        println!(
            "{}: exact {:.2} µs/cycle ({:.0} cycles/s), reference {:.1} µs/cycle, ratio {:.0}x",
            s.name,
            t_exact * 1e6,
            1.0 / t_exact,
            t_ref * 1e6,
            t_ref / t_exact
        );
        group.bench_function(format!("exact/{}", s.name), |b| {
            b.iter(|| exact.run_cycle(None, None).expect("cycle"));
        });
        group.bench_function(format!("reference/{}", s.name), |b| {
            b.iter(|| reference.run_cycle(None, None).expect("cycle"));
        });
        black_box(&exact);
        black_box(&reference);
    }
    group.finish();
}

/// `e^{A t}` of a 2x2 matrix in closed form: with `s = tr A / 2` and
/// `q² = s² − det A`, `e^{At} = e^{st} (cosh(qt) I + sinh(qt)/q (A − sI))`
/// (cos/sin for `q² < 0`).
fn expm2(a: [[f64; 2]; 2], t: f64) -> [[f64; 2]; 2] {
    let s = 0.5 * (a[0][0] + a[1][1]);
    let det = a[0][0] * a[1][1] - a[0][1] * a[1][0];
    let q2 = s * s - det;
    let (c, k) = if q2 > 0.0 {
        let q = q2.sqrt();
        ((q * t).cosh(), (q * t).sinh() / q)
    } else if q2 < 0.0 {
        let q = (-q2).sqrt();
        ((q * t).cos(), (q * t).sin() / q)
    } else {
        (1.0, t)
    };
    let e = (s * t).exp();
    [
        [e * (c + k * (a[0][0] - s)), e * k * a[0][1]],
        [e * k * a[1][0], e * (c + k * (a[1][1] - s))],
    ]
}

fn mul2(m: &[[f64; 2]; 2], x: [f64; 2]) -> [f64; 2] {
    [
        m[0][0] * x[0] + m[0][1] * x[1],
        m[1][0] * x[0] + m[1][1] * x[1],
    ]
}

/// The floor: one cycle of a two-state buck (inductor current, output
/// capacitor voltage) into a knee LED, constant off-time. The on-time is
/// two trajectory evaluations (a secant step on the peak threshold from
/// the last cycle's on-time), the off-time one precomputed affine update.
struct Floor {
    a_on: [[f64; 2]; 2],
    x_eq_on: [f64; 2],
    phi_off: [[f64; 2]; 2],
    c_off: [f64; 2],
    peak_a: f64,
    t_on_s: f64,
    x: [f64; 2],
}

impl Floor {
    fn new() -> Floor {
        // 24 V, 47 µH + 0.3 Ω, 2.2 µF across 5 LEDs (2.7 V knee, 0.4 Ω each).
        let (vin, l, r, c, vk, rd) = (24.0, 47e-6, 0.3, 2.2e-6, 13.5, 2.0);
        let a_on = [[-r / l, -1.0 / l], [1.0 / c, -1.0 / (c * rd)]];
        let a_off = a_on;
        // Equilibria: A x + b = 0.
        let eq = |a: [[f64; 2]; 2], b: [f64; 2]| {
            let det = a[0][0] * a[1][1] - a[0][1] * a[1][0];
            [
                -(a[1][1] * b[0] - a[0][1] * b[1]) / det,
                -(-a[1][0] * b[0] + a[0][0] * b[1]) / det,
            ]
        };
        let x_eq_on = eq(a_on, [vin / l, vk / (c * rd)]);
        let x_eq_off = eq(a_off, [-0.4 / l, vk / (c * rd)]);
        let phi_off = expm2(a_off, 1.5e-6);
        let d = mul2(&phi_off, x_eq_off);
        let c_off = [x_eq_off[0] - d[0], x_eq_off[1] - d[1]];
        Floor {
            a_on,
            x_eq_on,
            phi_off,
            c_off,
            peak_a: 1.0,
            t_on_s: 2e-6,
            x: [0.8, 14.8],
        }
    }

    fn on_at(&self, t: f64) -> [f64; 2] {
        let e = expm2(self.a_on, t);
        let d = mul2(
            &e,
            [self.x[0] - self.x_eq_on[0], self.x[1] - self.x_eq_on[1]],
        );
        [d[0] + self.x_eq_on[0], d[1] + self.x_eq_on[1]]
    }

    fn cycle(&mut self) {
        let (t1, t2) = (self.t_on_s, self.t_on_s * 1.001);
        let (z1, z2) = (self.on_at(t1), self.on_at(t2));
        let t = t1 + (self.peak_a - z1[0]) * (t2 - t1) / (z2[0] - z1[0]);
        let z = if (t - t1).abs() < (t - t2).abs() {
            z1
        } else {
            z2
        };
        self.t_on_s = t.clamp(1e-8, 1e-4);
        let y = mul2(&self.phi_off, z);
        self.x = [y[0] + self.c_off[0], y[1] + self.c_off[1]];
    }
}

/// Seconds per cycle of one batch of `n` calls of `f`.
fn batch(n: usize, mut f: impl FnMut()) -> f64 {
    let t = Instant::now();
    for _ in 0..n {
        f();
    }
    t.elapsed().as_secs_f64() / n as f64
}

/// Batches per figure and round: each figure is the least over this many
/// batches in each of [`ROUNDS`] rounds through the designs, the floor's
/// and the engine's taken in turn, so a burst of load from the rest of the
/// machine (a shared host) slows a batch of each alike, and a longer one
/// spoils one round of a design, not all.
const BATCHES: usize = 10;

/// Rounds through the designs (see [`BATCHES`]).
const ROUNDS: usize = 4;

/// One design's engine, recorders and least times so far (floor, exact,
/// bounded recording, unbounded recording), s per cycle.
struct Timed {
    name: String,
    exact: ExactEngine,
    bounded: Recorder,
    unbounded: Recorder,
    least: [f64; 4],
}

fn floor(c: &mut Criterion) {
    let mut f = Floor::new();
    for _ in 0..1000 {
        f.cycle();
    }
    println!(
        "floor and engines: least of {} alternating batches each ({ROUNDS} rounds of {BATCHES}; \
         floor 20 000 cycles, engine 2 000)",
        ROUNDS * BATCHES
    );
    let mut designs = chopwave_suite::realistic_set();
    designs.push(chopwave_suite::lamp_12v_hysteretic_with_output_cap());
    let mut timed: Vec<Timed> = designs
        .iter()
        .map(|s| {
            let mut exact = settled(ExactEngine::new(s), 200);
            // Event recording as a long run does it: a bounded recorder (as
            // the start-up recording) whose buffer is already in use, and,
            // for comparison, an unbounded one filling fresh memory (page
            // faults included).
            let mut bounded = Recorder::new(0, 1 << 16);
            for _ in 0..20_000 {
                exact.run_cycle(None, Some(&mut bounded)).expect("cycle");
            }
            Timed {
                name: s.name.clone(),
                exact,
                bounded,
                unbounded: Recorder::new(0, 0),
                least: [f64::INFINITY; 4],
            }
        })
        .collect();
    for _ in 0..ROUNDS {
        for d in &mut timed {
            for _ in 0..BATCHES {
                let times = [
                    batch(20_000, || f.cycle()),
                    batch(2_000, || d.exact.run_cycle(None, None).expect("cycle")),
                    batch(2_000, || {
                        d.exact
                            .run_cycle(None, Some(&mut d.bounded))
                            .expect("cycle")
                    }),
                    batch(2_000, || {
                        d.exact
                            .run_cycle(None, Some(&mut d.unbounded))
                            .expect("cycle")
                    }),
                ];
                for (l, t) in d.least.iter_mut().zip(times) {
                    *l = l.min(t);
                }
            }
        }
    }
    black_box(f.x);
    for d in timed {
        let [t_floor, t_exact, t_rec, t_fresh] = d.least;
        println!(
            "{}: exact {:.0} ns/cycle = {:.1}x the floor ({:.1} ns); with event recording {:.0} \
             ns/cycle ({:.2} M cycles/s), every sample kept in fresh memory {:.0} ns/cycle",
            d.name,
            t_exact * 1e9,
            t_exact / t_floor,
            t_floor * 1e9,
            t_rec * 1e9,
            1e-6 / t_rec,
            t_fresh * 1e9,
        );
        black_box(d.bounded.finish());
        black_box(d.unbounded.finish());
    }
    c.bench_function("floor/two-exponentials-one-affine", |b| {
        b.iter(|| f.cycle())
    });
}

/// Shooting against cycling on the slowly settling design: cycles run and
/// wall time to steady state (and the measurement cycles after it).
fn steady_state(c: &mut Criterion) {
    let base = chopwave_suite::slow_output_filter();
    let mut group = c.benchmark_group("steady-state");
    group
        .sample_size(10)
        .warm_up_time(Duration::from_millis(200))
        .measurement_time(Duration::from_secs(2));
    let variants = [
        (
            "shooting-analytic",
            SteadyMethod::Shooting,
            JacobianSource::Analytic,
        ),
        (
            "shooting-differences",
            SteadyMethod::Shooting,
            JacobianSource::FiniteDifference,
        ),
        ("cycling", SteadyMethod::Cycling, JacobianSource::Analytic),
    ];
    let mut times = Vec::new();
    for (name, method, jac) in variants {
        let mut s = base.clone();
        s.simulation.steady_state_method = method;
        s.simulation.shooting_jacobian = jac;
        s.simulation.steady_state_tolerance = 1e-12;
        let t = Instant::now();
        let r = simulate(&s, &RunOptions::default()).expect("run");
        let dt = t.elapsed().as_secs_f64();
        println!(
            "{}: {name}: {} cycles to steady state, {} Newton iterations, residual {:.1e}, {:.2} ms",
            base.name,
            r.steady.cycles_to_settle,
            r.steady.newton_iterations,
            r.steady.last_change,
            dt * 1e3
        );
        times.push((name, r.steady.cycles_to_settle, dt));
        group.bench_function(name, |b| {
            b.iter(|| simulate(&s, &RunOptions::default()).expect("run"))
        });
    }
    let (_, n_shoot, t_shoot) = times[0];
    let (_, n_cyc, t_cyc) = times[2];
    println!(
        "{}: cycling / shooting: {:.0}x the cycles, {:.0}x the wall time (one run)",
        base.name,
        n_cyc as f64 / n_shoot as f64,
        t_cyc / t_shoot
    );
    group.finish();
}

criterion_group!(benches, floor, per_cycle, steady_state);
criterion_main!(benches);

//! `inkling budget`'s cost model against the firmware's own measurements: instruction counts
//! of whole engine steps and keystrokes counted in QEMU on each core
//! (`tests/firmware/calibrate.sh --core CORE`, exact under `-icount shift=0`), and image sizes
//! written by `inkling convert` for the same shapes.

use inkling_host::commands::budget::{fitting, milliseconds, parse_size, within_latency};
use inkling_host::cost_model::{image_bytes, Calibration, Core, CostModel};

/// The Cortex-M4F's measurements (the default core).
fn measured() -> Calibration {
    measured_on(Core::CortexM4f)
}

fn measured_on(core: Core) -> Calibration {
    Calibration::parse(core.measurements())
        .unwrap_or_else(|e| panic!("the {} measurements read: {e}", core.name()))
}

#[test]
fn step_predictions_are_within_15_percent_of_the_measured_counts() {
    for core in Core::ALL {
        let cal = measured_on(core);
        assert!(
            cal.samples.len() >= 3,
            "{}: at least 3 measured shapes",
            core.name()
        );
        let model = CostModel::fit(&cal).expect("a fit");
        for s in &cal.samples {
            let predicted = model.step_instructions(&s.dims);
            let measured = s.step_instructions as f64;
            // The 15% bound is the task's acceptance level (common practice, no source).
            assert!(
                (predicted - measured).abs() <= 0.15 * measured,
                "{} {:?}: predicted {predicted:.0}, measured {measured}",
                core.name(),
                s.dims
            );
        }
    }
}

#[test]
fn keystroke_predictions_are_within_15_percent_at_the_measured_search_length() {
    for core in Core::ALL {
        let cal = measured_on(core);
        let model = CostModel::fit(&cal).expect("a fit");
        for s in &cal.samples {
            // With the sample's own search length, the overhead model alone is under test.
            let over =
                model.search_overhead[0] + model.search_overhead[1] * s.dims.state_len() as f64;
            let predicted =
                (s.search_steps_mean as f64 + 1.0) * (model.step_instructions(&s.dims) + over);
            let measured = s.keystroke_instructions_mean as f64;
            assert!(
                (predicted - measured).abs() <= 0.15 * measured,
                "{} {:?}: predicted {predicted:.0}, measured {measured}",
                core.name(),
                s.dims
            );
        }
    }
}

#[test]
fn image_size_is_what_convert_wrote() {
    // Exact: the firmware reported the size of the image `inkling convert` made.
    for core in Core::ALL {
        for s in &measured_on(core).samples {
            assert_eq!(image_bytes(&s.dims, false), s.image_bytes, "{:?}", s.dims);
        }
    }
}

#[test]
fn the_cores_without_an_fpu_cost_more_per_step() {
    // Soft float (compiler-builtins' f32 routines, dozens of instructions per operation)
    // against one FPU instruction per operation on the Cortex-M4F: the same shape must cost
    // several times as many instructions per step (the factor: common practice, no source).
    let m4 = CostModel::fit(&measured()).expect("a fit");
    for core in [Core::CortexM0plus, Core::Riscv32imc] {
        let model = CostModel::fit(&measured_on(core)).expect("a fit");
        for s in &measured_on(core).samples {
            let ratio = model.step_instructions(&s.dims) / m4.step_instructions(&s.dims);
            assert!(
                ratio > 4.0,
                "{} {:?}: {ratio:.1} times",
                core.name(),
                s.dims
            );
        }
    }
}

#[test]
fn fitting_shapes_respect_the_budget() {
    let model = CostModel::fit(&measured()).expect("a fit");
    let (flash, ram) = (parse_size("512K").unwrap(), parse_size("128K").unwrap());
    assert_eq!(flash, 512 * 1024);
    let found = fitting(&model, flash, ram, 3);
    assert!(!found.is_empty(), "some shape fits 512K/128K");
    for c in &found {
        assert!(c.flash_bytes <= flash && c.ram_bytes <= ram, "{c:?}");
    }
    // Sorted largest model first.
    assert!(found
        .windows(2)
        .all(|w| w[0].dims.macs_per_step() >= w[1].dims.macs_per_step()));
    assert!(parse_size("12Q").is_err());
}

#[test]
fn a_latency_limit_keeps_the_shapes_whose_largest_keystroke_fits() {
    let cal = measured();
    let model = CostModel::fit(&cal).expect("a fit");
    // The largest measured keystroke over the mean one: at least 1 by definition.
    assert!(model.max_to_mean >= 1.0);
    // The search's length comes from the trained model(s) measured, not the random ones.
    let trained: Vec<_> = cal.samples.iter().filter(|s| s.trained).collect();
    assert!(!trained.is_empty(), "the calibration has a trained model");
    let steps = trained
        .iter()
        .map(|s| s.search_steps_mean as f64)
        .sum::<f64>()
        / trained.len() as f64;
    assert_eq!(model.search_steps, steps);
    for s in &cal.samples {
        assert!(
            s.keystroke_instructions_max as f64
                <= model.max_to_mean * s.keystroke_instructions_mean as f64 + 0.5,
            "{:?}: the ratio covers the sample",
            s.dims
        );
    }
    let all = fitting(&model, 512 * 1024, 128 * 1024, 3);
    // 1 ms is 64,000 instructions at 64 MHz (the definition of the clock rate).
    assert_eq!(milliseconds(64_000.0, 64.0), 1.0);
    let limit = 100.0;
    let mut fast = all.clone();
    within_latency(&mut fast, 64.0, limit);
    assert!(
        fast.len() < all.len(),
        "some shape is slower than {limit} ms"
    );
    for c in &all {
        let kept = fast.contains(c);
        let max_ms = milliseconds(c.keystroke_max_instructions, 64.0);
        assert_eq!(kept, max_ms <= limit, "{c:?}");
        assert!(c.keystroke_max_instructions >= c.keystroke_instructions);
    }
}

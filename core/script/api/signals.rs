//! Open-loop signal constructors and arithmetic (`step`, `ramp`, `sine`,
//! `sine_with_dwell`, `chirp`, `table`, `sequence`, `+`, `*`, `-`); a
//! combined signal is refused when too large or deep (`ranges::sized`).

use rhai::{Array, Dynamic, Engine};

use super::errors::Res;
use super::ranges::sized;
use super::values::{direction, num, numbers, signal_error, signal_of};
use crate::manoeuvre::Signal;

/// Registers the signal type, its constructors and its arithmetic.
pub(crate) fn register(engine: &mut Engine) {
    engine.register_type_with_name::<Signal>("Signal");
    register_shapes(engine);
    register_combinations(engine);
}

/// Signals of a shape: constant, step, ramp, sine, sine with dwell, chirp.
fn register_shapes(engine: &mut Engine) {
    engine.register_fn("constant", |v: Dynamic| -> Res<Signal> {
        Signal::constant(num(&v, "constant value")?).map_err(signal_error)
    });
    engine.register_fn(
        "step",
        |from: Dynamic, to: Dynamic, at: Dynamic, rate: Dynamic| -> Res<Signal> {
            Signal::step(
                num(&from, "step from")?,
                num(&to, "step to")?,
                num(&at, "step at")?,
                num(&rate, "step rate")?,
            )
            .map_err(signal_error)
        },
    );
    engine.register_fn(
        "ramp",
        |at: Dynamic, rate: Dynamic, limit: Dynamic| -> Res<Signal> {
            Signal::ramp(
                num(&at, "ramp at")?,
                num(&rate, "ramp rate")?,
                Some(num(&limit, "ramp limit")?),
            )
            .map_err(signal_error)
        },
    );
    engine.register_fn("ramp", |at: Dynamic, rate: Dynamic| -> Res<Signal> {
        Signal::ramp(num(&at, "ramp at")?, num(&rate, "ramp rate")?, None).map_err(signal_error)
    });
    engine.register_fn(
        "sine",
        |amp: Dynamic, hz: Dynamic, at: Dynamic, cycles: Dynamic| -> Res<Signal> {
            Signal::sine(
                num(&amp, "sine amplitude")?,
                num(&hz, "sine frequency")?,
                num(&at, "sine start")?,
                Some(num(&cycles, "sine cycles")?),
            )
            .map_err(signal_error)
        },
    );
    engine.register_fn(
        "sine_with_dwell",
        |amp: Dynamic, dir: &str, at: Dynamic| -> Res<Signal> {
            Signal::sine_with_dwell(num(&amp, "amplitude")?, direction(dir)?, num(&at, "start")?)
                .map_err(signal_error)
        },
    );
    engine.register_fn(
        "chirp",
        |amp: Dynamic, f0: Dynamic, f1: Dynamic, at: Dynamic, duration: Dynamic| -> Res<Signal> {
            Signal::chirp(
                num(&amp, "chirp amplitude")?,
                num(&f0, "chirp start frequency")?,
                num(&f1, "chirp end frequency")?,
                num(&at, "chirp start")?,
                num(&duration, "chirp duration")?,
            )
            .map_err(signal_error)
        },
    );
}

/// Tables, sequences, sums, offsets, gains and the value at a time.
fn register_combinations(engine: &mut Engine) {
    engine.register_fn("table", |times: Array, values: Array| -> Res<Signal> {
        Signal::table(
            numbers(&times, "table time")?,
            numbers(&values, "table value")?,
        )
        .map_err(signal_error)
        .and_then(sized)
    });
    engine.register_fn("sequence", |signals: Array, switch: Array| -> Res<Signal> {
        let s = signals
            .iter()
            .map(|v| signal_of(v, "sequence entry"))
            .collect::<Res<Vec<_>>>()?;
        Signal::sequence(s, numbers(&switch, "switch time")?)
            .map_err(signal_error)
            .and_then(sized)
    });
    engine.register_fn("+", |a: Signal, b: Signal| -> Res<Signal> {
        Signal::sum(vec![a, b])
            .map_err(signal_error)
            .and_then(sized)
    });
    engine.register_fn("+", |a: Signal, b: Dynamic| -> Res<Signal> {
        a.offset(num(&b, "offset")?)
            .map_err(signal_error)
            .and_then(sized)
    });
    engine.register_fn("+", |b: Dynamic, a: Signal| -> Res<Signal> {
        a.offset(num(&b, "offset")?)
            .map_err(signal_error)
            .and_then(sized)
    });
    engine.register_fn("*", |a: Signal, k: Dynamic| -> Res<Signal> {
        a.scaled(num(&k, "gain")?)
            .map_err(signal_error)
            .and_then(sized)
    });
    engine.register_fn("*", |k: Dynamic, a: Signal| -> Res<Signal> {
        a.scaled(num(&k, "gain")?)
            .map_err(signal_error)
            .and_then(sized)
    });
    engine.register_fn("-", |a: Signal| -> Res<Signal> {
        a.scaled(-1.0).map_err(signal_error).and_then(sized)
    });
    engine.register_fn("value", |s: &mut Signal, t: Dynamic| -> Res<f64> {
        Ok(s.value(num(&t, "time")?))
    });
}

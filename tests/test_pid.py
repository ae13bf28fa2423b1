"""PID forms, exact conversions and plant-convention settings."""

import math

import control
import numpy as np
import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st

from drivekit.pid import PID
from drivekit.units import ParameterError

W = np.logspace(-4, 3, 80)


def response(tf, w=W):
    return np.asarray(tf(1j * w))


def reference_tf(kp, ti, td, n, form):
    """The three forms built with python-control arithmetic, independently of PID._num_den."""
    s = control.tf("s")
    tf = td / n
    integral = 0 if ti == math.inf else 1 / (ti * s)
    if form == "ideal":
        return kp * (1 + integral + td * s / (tf * s + 1))
    if form == "parallel":
        return kp + integral + td * s / (tf * s + 1)
    return kp * (1 + integral) * (td * s + 1) / (tf * s + 1)


@pytest.mark.parametrize("form", ["ideal", "parallel", "series"])
@pytest.mark.parametrize(
    ("kp", "ti", "td"), [(2.0, 60.0, 6.0), (0.7, 12.0, 0.0), (5.0, math.inf, 0.0), (1.5, 8.0, 1.0)]
)
def test_forms_match_python_control(form, kp, ti, td):
    # Reference library: python-control transfer-function arithmetic
    c = PID(kp, ti, td, form=form, derivative_filter=8.0)
    ref = reference_tf(kp, ti, td, 8.0, form)
    np.testing.assert_allclose(response(c.tf), response(ref), rtol=1e-12)
    np.testing.assert_allclose(c.frequency_response(W), response(ref), rtol=1e-12)
    lin = c.to_linear()
    np.testing.assert_allclose(lin.frequency_response(W), response(ref), rtol=1e-9)
    assert lin.order == (1 if ti != math.inf else 0) + (1 if td > 0 else 0)
    assert (lin.input_name, lin.output_name) == ("control error", "controller output")


def test_series_to_ideal_classic_formulas():
    # Source: Åström & Hägglund, Advanced PID Control, ISA 2006, §3.2 (from memory):
    # K = K'(1 + Td'/Ti'), Ti = Ti' + Td', Td = Ti' Td' / (Ti' + Td') (no derivative filter).
    # With a negligible filter (N = 1e9) the exact conversion tends to these.
    k_s, ti_s, td_s = 1.2, 40.0, 10.0
    c = PID(k_s, ti_s, td_s, form="series", derivative_filter=1e9).to_form("ideal")
    assert c.kp == pytest.approx(1.2 * (1 + 10 / 40), rel=1e-7)
    assert c.ti == pytest.approx(50.0, rel=1e-7)
    assert c.td == pytest.approx(40 * 10 / 50, rel=1e-7)


@pytest.mark.parametrize(("start", "via"), [("ideal", "series"), ("ideal", "parallel"), ("series", "parallel")])
def test_round_trip_is_exact(start, via):
    c = PID(2.0, 60.0, 6.0, form=start, derivative_filter=10.0)
    back = c.to_form(via).to_form(start)
    assert (back.kp, back.ti, back.td, back.derivative_filter) == pytest.approx(
        (c.kp, c.ti, c.td, c.derivative_filter), rel=1e-12
    )
    # the converted controller is the same transfer function
    np.testing.assert_allclose(response(c.to_form(via).tf), response(c.tf), rtol=1e-12)


@settings(max_examples=60, deadline=None)
@given(
    kp=st.floats(0.01, 100.0),
    ti=st.floats(0.1, 1000.0),
    ratio=st.one_of(st.just(0.0), st.floats(1e-3, 0.24)),
    n=st.floats(2.0, 30.0),
)
def test_ideal_series_round_trip_property(kp, ti, ratio, n):
    td = ratio * ti
    tf = td / n
    # with the filter, the numerator (ti tf + ti td) s**2 + (ti + tf) s + 1 has real zeros only when
    # (ti + tf)**2 >= 4 ti (tf + td); ti >= 4 td is the unfiltered limit
    assume((ti + tf) ** 2 >= 4 * ti * (tf + td))
    c = PID(kp, ti, td, derivative_filter=n)
    s = c.to_form("series")
    np.testing.assert_allclose(response(s.tf), response(c.tf), rtol=1e-9)
    back = s.to_form("ideal")
    assert (back.kp, back.ti, back.td) == pytest.approx((c.kp, c.ti, c.td), rel=1e-9, abs=1e-12)


def test_ideal_to_series_needs_real_zeros():
    c = PID(1.0, 10.0, 5.0)  # ti < 4 td: complex zeros
    with pytest.raises(ParameterError, match=r"expected ti >= 4 td: the series form has real zeros only"):
        c.to_form("series")


def test_pi_has_no_derivative_state_and_p_is_static():
    pi = PID(0.5, 20.0)
    assert pi.kind == "PI"
    assert pi.to_linear().order == 1
    p = PID(3.0)
    assert p.kind == "P"
    lin = p.to_linear()
    assert lin.order == 0
    assert float(lin.D[0, 0]) == 3.0


def test_setpoint_weights_path():
    # u = kp (b r - y) + kp/(ti s) (r - y) + kp td s/(tf s + 1) (c r - y)
    c = PID(2.0, 10.0, 1.0, setpoint_weights=(0.5, 0.0))
    s = control.tf("s")
    ref = 2.0 * (0.5 + 1 / (10.0 * s))
    np.testing.assert_allclose(response(c.setpoint_tf), response(ref), rtol=1e-12)


def test_units_for_times():
    c = PID(1.0, "0.2 min", "3 s")
    assert (c.ti, c.td) == (12.0, 3.0)


# -- plant conventions -----------------------------------------------------------------------
def test_settings_hand_calculation():
    # Hand calculation: transmitter 0-500 m**3/h = 0-0.138889 m**3/s, output 0-100 %.
    # kp = 360 %/(m**3/s) -> gain = 360 * 0.138889 / 100 = 0.5 %/%; PB = 100/0.5 = 200 %;
    # ti = 12 s = 0.2 min/repeat = 5 repeats/min; td = 3 s = 0.05 min.
    c = PID(360.0, 12.0, 3.0, output_limits=(5.0, 95.0))
    st_ = c.settings(measurement_span=("0 m**3/h", "500 m**3/h"))
    assert st_.gain == pytest.approx(0.5, rel=1e-12)
    assert st_.proportional_band == pytest.approx(200.0, rel=1e-12)
    assert st_.reset_min_per_repeat == pytest.approx(0.2, rel=1e-12)
    assert st_.repeats_per_min == pytest.approx(5.0, rel=1e-12)
    assert st_.derivative_min == pytest.approx(0.05, rel=1e-12)
    assert st_.output_limits == pytest.approx((5.0, 95.0))
    assert st_.action == "reverse"
    assert st_.measurement_unit == "m³/h"
    rows = {r[0]: (r[1], r[2]) for r in st_.table()}
    assert rows["gain"] == ("0.5", "%/%")
    assert rows["reset"] == ("0.2", "min/repeat")
    assert rows["reset rate"] == ("5", "repeats/min")


def test_settings_with_si_spans_and_output_in_ma():
    # Hand calculation: span 0.2 m**3/s, output 4-20 mA (16 mA);
    # kp = 40 mA/(m**3/s) -> gain = 40 * 0.2 / 16 = 0.5 (fraction of span per fraction of span)
    st_ = PID(-40.0, 30.0).settings(measurement_span=(0.0, 0.2), output_span=("4 mA", "20 mA"))
    assert st_.gain == pytest.approx(0.5, rel=1e-12)
    assert st_.action == "direct"
    assert st_.output_unit == "mA"


def test_from_settings_round_trip():
    c = PID.from_settings(
        proportional_band=250.0,
        reset="0.15 min",
        derivative="0.05 min",
        measurement_span=("0 m**3/h", "400 m**3/h"),
    )
    # Hand calculation: gain 0.4 %/% * 100 % / (400/3600 m**3/s) = 360 %/(m**3/s); ti 9 s; td 3 s
    assert c.kp == pytest.approx(360.0, rel=1e-12)
    assert (c.ti, c.td) == pytest.approx((9.0, 3.0))
    st_ = c.settings(measurement_span=("0 m**3/h", "400 m**3/h"))
    assert (st_.gain, st_.reset_min_per_repeat) == pytest.approx((0.4, 0.15), rel=1e-12)


def test_parallel_settings_through_ideal_equivalent():
    c = PID(2.0, 5.0, 0.0, form="parallel")  # 2 + 1/(5 s) = 2 (1 + 1/(10 s))
    st_ = c.settings(measurement_span=(0.0, 100.0))
    assert st_.form == "ideal"
    assert st_.reset_time == pytest.approx(10.0, rel=1e-12)


@pytest.mark.parametrize(
    ("args", "kwargs", "match"),
    [
        ((1.0, -3.0), {}, r"`ti`: got -3 s, expected a reset time > 0 s"),
        ((0.0,), {}, r"`kp`: got 0.0, expected a finite nonzero gain"),
        ((1.0, 10.0, -1.0), {}, r"`td`: got -1 s, expected a derivative time >= 0 s"),
        ((1.0,), {"form": "isa"}, r"`form`: got 'isa', expected one of 'ideal', 'parallel', 'series'"),
        ((1.0, "3 kg"), {}, r"`ti`: got '3 kg', expected reset time in s"),
        ((1.0,), {"derivative_filter": 0.0}, r"`derivative_filter`: got 0.0, expected N > 0"),
        ((1.0,), {"output_limits": (100.0, 0.0)}, r"`output_limits`: got \(100.0, 0.0\), expected \(low, high\)"),
        ((1.0,), {"sample_time": 0.0}, r"`sample_time`: got 0 s, expected a scan time > 0 s"),
    ],
)
def test_bad_input_messages(args, kwargs, match):
    with pytest.raises(ParameterError, match=match):
        PID(*args, **kwargs)


def test_bad_settings_messages():
    with pytest.raises(
        ParameterError, match=r"`measurement_span`: got \(5.0, 5.0\), expected \(low, high\) with low < high"
    ):
        PID(1.0).settings(measurement_span=(5.0, 5.0))
    with pytest.raises(ParameterError, match="expected exactly one of them"):
        PID.from_settings(gain=0.5, proportional_band=200.0, measurement_span=(0.0, 1.0))
    with pytest.raises(ParameterError, match=r"`gain`: got -0.5, expected a controller gain > 0 %/%"):
        PID.from_settings(gain=-0.5, measurement_span=(0.0, 1.0))
    with pytest.raises(ParameterError, match="expected low and high in one kind of unit"):
        PID(1.0).settings(measurement_span=("0 m**3/h", "5 bar"))

"""Part limits as datasheets give them (engine/circuit/part_limits.py; README "File formats", the preset file)."""

import math

import numpy as np
import pytest

from railroom.engine.analysis import analyse
from railroom.engine.formats.chain_file import chain_from_text
from railroom.engine.formats.presets import parts_from_text
from railroom.engine.reports.json_report import chain_report

BASE = """description = "test class (illustrative values)"
supply = ["4", "36"]
supply_abs_max = "40"
output_headroom = ["1", "1"]
input_headroom = ["1", "1"]
gbw = "1M"
slew = "1V/us"
open_loop_gain = "100dB"
offset = "0"
output_current = "20m"
"""


def part_of(extra: str = "", part_id: str = "p"):
    parts, problems = parts_from_text(f"[part.{part_id}]\n{BASE}{extra}", "lab.toml")
    assert problems == []
    return {part_id: parts[0]}


def problems_of(extra: str):
    parts, problems = parts_from_text(f"[part.p]\n{BASE}{extra}", "lab.toml")
    assert parts == []
    return problems


def follower(
    temperature="[25, 25]",
    level='["0", "1"]',
    stage_extra="",
    positive="12",
    negative="-12",
    block="follower",
):
    return f'''format = 1
[conditions]
temperature = {temperature}
[rails.main]
positive = "{positive}"
negative = "{negative}"
[source]
level = {level}
[[stage]]
name = "buffer"
block = "{block}"
part = "p"
{stage_extra}
'''


def run(text: str, parts, **kw):
    return analyse(chain_from_text(text), parts, design_aids=False, headroom=False, **kw)


# --- 1. temperature_range ----------------------------------------------------------------


def test_a_chain_range_outside_the_rated_range_is_a_caution_naming_part_and_stage():
    # the definition in the README: the rated ambient range must hold the chain's whole range
    parts = part_of('temperature_range = ["0", "70"]\n')
    hot = run(follower("[-40, 85]"), parts)
    (caution,) = hot.stages[0].cautions
    assert "'p'" in caution and "[0, 70]" in caution and "[-40, 85]" in caution
    assert any(
        c.startswith("stage 1 (buffer):") and "rated range" in c for c in chain_report(hot)["cautions"]
    )
    assert run(follower("[0, 70]"), parts).stages[0].cautions == ()
    assert run(follower("[0, 71]"), parts).stages[0].cautions != ()


def test_a_rated_range_given_high_to_low_is_a_located_error():
    (problem,) = problems_of('temperature_range = ["85", "-40"]\n')
    assert problem.file == "lab.toml" and problem.line == 12
    assert problem.field == "part.p.temperature_range" and "reversed" in problem.message


# --- 2. bias_current_doubling --------------------------------------------------------------


def source_follower(temperature: str, method: str = "corners") -> str:
    return f'''format = 1
[conditions]
temperature = {temperature}
method = "{method}"
samples = 4000
[rails.main]
positive = "12"
negative = "-12"
[source]
level = ["0", "10.95"]
impedance = "10M"
[[stage]]
name = "buffer"
block = "follower"
part = "p"
'''


def test_the_doubling_rule_gives_the_bias_at_the_hottest_temperature():
    # common practice for FET inputs: Ib(T) = Ib(25 C) 2^((T - 25)/N); N = 10 C, 125 C: 2^10 = 1024
    from railroom.engine.circuit.part_limits import bias_at

    (part,) = part_of('bias_current = "10p"\nbias_current_doubling = "10"\n').values()
    assert bias_at(part, 125.0) == pytest.approx(10e-12 * 1024, rel=1e-12)
    assert bias_at(part, 35.0) == pytest.approx(20e-12, rel=1e-12)
    assert bias_at(part, -40.0) == 10e-12  # no doubling below 25 C


def test_the_doubled_bias_through_the_source_impedance_moves_the_output_and_the_verdict():
    # a follower fed through 10 Mohm: the + input (and so the output) moves by Ib Rs. At 125 C the
    # 10 pA bias is 10.24 nA (doubling every 10 C), 102.4 mV through 10 Mohm: the output's 11 V
    # ceiling (12 V rail less 1 V headroom) is passed; without the doubling it is 0.1 mV
    flat = part_of('bias_current = "10p"\n')
    doubling = part_of('bias_current = "10p"\nbias_current_doubling = "10"\n')
    cold = run(source_follower("[25, 125]"), flat).stages[0]
    hot = run(source_follower("[25, 125]"), doubling).stages[0]
    follow = 1e5 / (1 + 1e5)  # Black's formula A / (1 + A beta), beta = 1, A = 100 dB
    assert cold.measure.output[1] == pytest.approx((10.95 + 10e-12 * 10e6) * follow, abs=1e-9)
    assert hot.measure.output[1] == pytest.approx((10.95 + 10.24e-9 * 10e6) * follow, abs=1e-9)
    assert cold.go and not hot.go and "output-high" in hot.reasons
    # no doubling while the chain stays at or below 25 C
    assert run(source_follower("[-40, 25]"), doubling).stages[0].go


def test_every_method_uses_the_doubled_bias():
    # rss and Monte Carlo take the bias at the hottest temperature as well (README: an outside bound)
    doubling = part_of('bias_current = "10p"\nbias_current_doubling = "10"\n')
    for method in ("rss", "montecarlo"):
        stage = run(source_follower("[25, 125]", method), doubling).stages[0]
        # the bias is drawn (or spread) within +/-10.24 nA: the output may reach 10.95 + 0.1024 V
        assert 10.95 + 0.05 < stage.measure.output[1] <= 10.95 + 0.1024 + 1e-9, method
        assert not stage.go, method


# --- 3. input_differential_max -------------------------------------------------------------


def alarm(block_fields: str, level='["0", "5"]', method="corners", part="p") -> str:
    return f'''format = 1
[conditions]
method = "{method}"
samples = 2000
[rails.main]
positive = "12"
negative = "-12"
[source]
level = {level}
[[stage]]
name = "alarm"
part = "{part}"
{block_fields}
'''


COMPARATOR = 'block = "comparator"\nthreshold = "2.5"'


@pytest.mark.parametrize("method", ["corners", "rss", "montecarlo"])
def test_a_clamp_diode_comparator_fed_0_to_5_v_against_2_5_v_fails_input_differential(method):
    # worked example: clamp diodes between the inputs conduct beyond about 0.7 V (a silicon
    # junction's forward drop, [memory]); fed 0..5 V against 2.5 V the inputs differ by up to
    # 2.5 V either way: margin 0.7 - 2.5 = -1.8 V, NO-GO although the comparator itself works
    clamped = part_of('input_differential_max = "0.7"\n')
    stage = run(alarm(COMPARATOR, method=method), clamped).stages[0]
    assert stage.margins["input-differential"] == pytest.approx(-1.8, abs=1e-9)
    assert "input-differential" in stage.reasons and not stage.go
    assert stage.regime == "saturated"
    # the same part without the rating, or fed within 0.7 V of the threshold, passes
    assert "input-differential" not in run(alarm(COMPARATOR, method=method), part_of()).stages[0].margins
    near = run(alarm(COMPARATOR, level='["2.0", "3.0"]', method=method), clamped).stages[0]
    assert near.margins["input-differential"] == pytest.approx(0.2, abs=1e-9) and near.go


def test_the_report_and_the_table_carry_the_input_differential_check():
    result = run(alarm(COMPARATOR), part_of('input_differential_max = "0.7"\n'))
    report = chain_report(result)
    assert report["stages"][0]["margins"]["input-differential"] == pytest.approx(-1.8)
    assert "input-differential" in report["stages"][0]["reasons"] and report["verdict"] == "no-go"
    from railroom.engine.formats.schema import report_schema
    import jsonschema

    jsonschema.validate(report, report_schema())


def test_a_schmitt_trigger_plus_input_against_its_reference():
    # non-inverting Schmitt trigger (Sedra & Smith, ch. 18): V+ = (Vin r2 + Vout r1)/(r1 + r2), the
    # - input at ref = 0. Rails +/-12 V, 1 V headroom: the output sits at +/-11 V (no load). Fed
    # +/-5 V with r1 = 10k, r2 = 100k: the + input reaches (5 x 100k + 11 x 10k)/110k = 5.545 V
    # (superposition of the two sources through the divider)
    fields = 'block = "schmitt"\nr1 = "10k"\nr2 = "100k"'
    stage = run(alarm(fields, level='["-5", "5"]'), part_of('input_differential_max = "7"\n')).stages[0]
    assert stage.measure.input_differential == pytest.approx((5 * 100e3 + 11 * 10e3) / 110e3, rel=1e-9)
    assert stage.margins["input-differential"] == pytest.approx(7 - 610 / 110, rel=1e-9)


# --- 4. phase_reversal ---------------------------------------------------------------------


def test_phase_reversal_is_a_caution_where_the_input_range_check_fails():
    # a follower on +/-12 V with 1 V input headroom: its common-mode range ends at 11 V (README,
    # input_headroom); fed up to 11.5 V the input-high check fails by 0.5 V
    reversing = part_of("phase_reversal = true\n")
    over = run(follower(level='["0", "11.5"]'), reversing).stages[0]
    assert over.margins["input-high"] == pytest.approx(-0.5, abs=1e-3)
    (caution,) = over.cautions
    assert "reverses phase" in caution and "'p'" in caution
    assert run(follower(level='["0", "11.5"]'), part_of()).stages[0].cautions == ()
    assert run(follower(level='["0", "10.5"]'), reversing).stages[0].cautions == ()
    # below the range too
    under = run(follower(level='["-11.5", "0"]'), reversing).stages[0]
    assert under.margins["input-low"] < 0 and any("reverses phase" in c for c in under.cautions)


def test_phase_reversal_takes_true_or_false_only():
    (problem,) = problems_of('phase_reversal = "sometimes"\n')
    assert problem.field == "part.p.phase_reversal" and problem.line == 12
    assert "true or false" in problem.message


# --- 5. output_headroom_curve --------------------------------------------------------------

CURVE = 'output_headroom_curve = [["0", "1", "1"], ["10m", "1.5", "2"], ["20m", "2.5", "3"]]\n'


def loaded_follower(level: str) -> str:
    return follower(level=level, stage_extra='load = "1k"')


def test_a_swing_curve_read_at_two_currents():
    # worked example: a datasheet's output swing against output current, read at the current the
    # stage draws by linear interpolation between the points (README, output_headroom_curve).
    # Fed -8..9 V into 1 kohm on +/-12 V: 9 mA sourced at the top, upper headroom
    # 1 + (9/10)(1.5 - 1) = 1.45 V -> ceiling 10.55 V; 8 mA sunk at the bottom, lower headroom
    # 1 + (8/10)(2 - 1) = 1.8 V -> floor -10.2 V. Each side by its own direction of current.
    stage = run(loaded_follower('["-8", "9"]'), part_of(CURVE)).stages[0]
    (amp,) = stage.measure.opamps
    gain = 1e5 / (1 + 1e5)  # Black's formula: the follower's output is 9 A/(1 + A)
    upper = 1 + (9 * gain / 10) * 0.5
    lower = 1 + (8 * gain / 10) * 1.0
    assert amp.window == pytest.approx((-12 + lower, 12 - upper), abs=1e-9)
    assert stage.margins["output-high"] == pytest.approx(12 - upper - 9 * gain, abs=1e-9)


def test_the_curve_replaces_the_output_resistance_and_can_change_the_verdict():
    # 9 V into 1 kohm: with 50 ohm the headroom is 1 + 50 x 9 mA = 1.45 V (GO, 1.55 V of room);
    # the curve below gives 1.5 + (4/5)(3.5 - 1.5) = 3.1 V at 9 mA: ceiling 8.9 V, NO-GO
    resistive = part_of('output_resistance = "50"\n')
    steep = part_of(
        'output_resistance = "50"\noutput_headroom_curve = [["0", "1", "1"], '
        '["5m", "1.5", "1.5"], ["10m", "3.5", "3.5"]]\n'
    )
    text = loaded_follower('["0", "9"]')
    gain = 1e5 / (1 + 1e5)
    assert run(text, resistive).stages[0].margins["output-high"] == pytest.approx(
        12 - 1 - 50 * 9e-3 * gain - 9 * gain, abs=1e-9
    )
    bent = run(text, steep).stages[0]
    assert bent.margins["output-high"] == pytest.approx(
        12 - (1.5 + (9 * gain - 5) / 5 * 2.0) - 9 * gain, abs=1e-9
    )
    assert not bent.go and run(text, resistive).stages[0].go
    for method in ("rss", "montecarlo"):  # the draws use the same curve
        assert not run(text, steep, method=method).stages[0].go, method


@pytest.mark.parametrize(
    "curve, words",
    [
        ('[["0", "1", "1"], ["10m", "0.8", "2"]]', "not monotonic"),
        ('[["-1m", "1", "1"], ["10m", "2", "2"]]', "negative current"),
        ('[["10m", "2", "2"], ["0", "1", "1"]]', "must rise"),
        ('[["0", "1"]]', "expected points"),
    ],
)
def test_a_bad_curve_is_a_located_error(curve, words):
    (problem,) = problems_of(f"output_headroom_curve = {curve}\n")
    assert problem.file == "lab.toml" and problem.line == 12
    assert problem.field == "part.p.output_headroom_curve" and words in problem.message


def test_a_comparator_level_follows_the_curve():
    # saturated high at 11 V into 1 kohm: 11 mA read on the curve, 1.5 + (1/10)(2.5 - 1.5) = 1.6 V
    # and at -11 V, 11 mA sunk: 2 + (1/10)(3 - 2) = 2.1 V above the negative rail
    from railroom.engine.circuit.model import Rails
    from railroom.engine.circuit.opamp import saturated_levels

    (part,) = part_of(CURVE).values()
    (low_min, low_max), (high_min, high_max) = saturated_levels(part, Rails("main", 12, -12), 1e-3)
    assert high_min == pytest.approx(12 - 1.6, abs=1e-9) and high_max == 11.0
    assert low_max == pytest.approx(-12 + 2.1, abs=1e-9) and low_min == -11.0


# --- 6. capacitive load: the phase-margin estimate -----------------------------------------


def exact_two_pole_margin(gbw: float, noise_gain: float, f_p2: float, a0: float = 1e5) -> float:
    """The phase margin of the loop T(s) = A(s)/NG/(1 + s/wp2), A one-pole (A0, gbw/A0), found
    with scipy.signal on a dense grid: |T| = 1 by interpolation, margin = 180° + angle T."""
    from scipy import signal

    w1, w2 = 2 * math.pi * gbw / a0, 2 * math.pi * f_p2
    loop = signal.TransferFunction([a0 / noise_gain * w1 * w2], [1, w1 + w2, w1 * w2])
    w = np.logspace(math.log10(w1), math.log10(100 * 2 * math.pi * gbw), 200001)
    _, h = signal.freqresp(loop, w)
    k = np.argmax(np.abs(h) < 1.0)
    return 180.0 + math.degrees(np.angle(h[k]))


def test_the_estimate_against_the_textbook_two_pole_result():
    # two-pole loop (Sedra & Smith, Microelectronic Circuits, the chapter on feedback: stability
    # by Bode plots, [memory]): with the second pole at the one-pole crossover f_t/NG the
    # estimate is 90° - atan(1) = 45°; the exact crossover is lower, at x f_c with
    # x^4 + x^2 - 1 = 0 (|T| = 1: 1 / (x^2 (1 + x^2)) = 1), x = 0.786, margin 51.8°
    from railroom.engine.circuit.part_limits import phase_margin_deg

    ro = 100.0
    c = 1 / (2 * math.pi * ro * 1e6)  # f_p2 = 1 MHz
    assert phase_margin_deg(1e6, 1.0, ro, c) == pytest.approx(45.0, abs=1e-9)
    x = math.sqrt((math.sqrt(5) - 1) / 2)
    exact = 90 - math.degrees(math.atan(x))
    assert exact == pytest.approx(51.83, abs=0.01)
    assert exact_two_pole_margin(1e6, 1.0, 1e6) == pytest.approx(exact, abs=0.05)
    # the estimate is never above the exact margin (pessimistic), over a span of pole ratios
    for ratio in (0.1, 0.3, 1.0, 3.0, 10.0):
        estimate = phase_margin_deg(1e6, 2.0, ro, 1 / (2 * math.pi * ro * ratio * 0.5e6))
        assert estimate <= exact_two_pole_margin(1e6, 2.0, ratio * 0.5e6) + 0.05, ratio


def test_a_follower_with_a_capacitive_load_gets_the_estimate_and_the_caution():
    # follower (noise gain 1) on a 1 MHz part with 100 ohm output resistance: 1.59 nF puts the
    # second pole at 1 MHz, margin 45°; 10 nF: f_p2 = 159 kHz, 90° - atan(6.28) = 9.0°
    parts = part_of('output_resistance = "100"\n')
    at_45 = run(follower(stage_extra='load_capacitance = "1.59155n"'), parts).stages[0]
    assert at_45.measure.phase_margin_deg == pytest.approx(45.0, abs=1e-3)
    heavy = run(follower(stage_extra='load_capacitance = "10n"'), parts)
    assert heavy.stages[0].measure.phase_margin_deg == pytest.approx(
        90 - math.degrees(math.atan(2 * math.pi * 100 * 10e-9 * 1e6)), rel=1e-6
    )
    assert any("phase margin 9°" in c for c in heavy.stages[0].cautions)
    assert chain_report(heavy)["stages"][0]["phase_margin_deg"] == pytest.approx(9.04, abs=0.01)
    light = run(follower(stage_extra='load_capacitance = "100p"'), parts).stages[0]
    assert light.measure.phase_margin_deg > 45 and light.cautions == ()
    assert "phase_margin_deg" not in chain_report(run(follower(), parts))["stages"][0]


def test_a_gain_of_two_halves_the_crossover():
    # noninverting, rf = rg: noise gain 2, crossover 500 kHz: with f_p2 = 159 kHz the margin is
    # 90° - atan(3.14) = 17.7°
    parts = part_of('output_resistance = "100"\n')
    fields = 'rf = "10k"\nrg = "10k"\nload_capacitance = "10n"'
    stage = run(follower(block="noninverting", stage_extra=fields), parts).stages[0]
    assert stage.measure.phase_margin_deg == pytest.approx(
        90 - math.degrees(math.atan(2 * math.pi * 100 * 10e-9 * 0.5e6)), abs=0.01
    )


def test_a_clipping_feedback_stage_is_checked_against_input_differential_max():
    # noninverting x10 (rf 90k, rg 10k) fed 1.5 V on +/-12 V: the output would be 15 V but is
    # held at 11 V. With its loop broken the inputs differ by the overshoot over the noise gain
    # (V+ - V- = beta (ideal - actual), from V- = beta Vout: Sedra & Smith's non-inverting
    # amplifier), 4 V / 10 = 0.4 V, plus the linear error |Vout| (1/A0 + f/gbw) at 1 Hz
    limit = 0.35
    parts = part_of(f'input_differential_max = "{limit}"\n')
    text = follower(block="noninverting", level='["0", "1.5"]', stage_extra='rf = "90k"\nrg = "10k"')
    stage = run(text, parts).stages[0]
    closed = 1 / (1e-5 + 0.1)  # Black's formula, A0 = 1e5, beta = 0.1
    ideal = 1.5 * closed
    expected = (ideal - 11.0) / closed + ideal * (1e-5 + 1.0 / 1e6)
    assert stage.regime == "clipping"
    assert stage.margins["input-differential"] == pytest.approx(limit - expected, rel=1e-9)
    assert expected == pytest.approx(0.4, abs=1e-3)
    assert "input-differential" in stage.reasons
    # the same stage in its linear range is not checked (its loop holds the inputs together)
    linear = run(
        follower(block="noninverting", level='["0", "1.0"]', stage_extra='rf = "90k"\nrg = "10k"'), parts
    ).stages[0]
    assert linear.regime == "linear" and "input-differential" not in linear.margins


# --- the fields in the tools -----------------------------------------------------------------


@pytest.mark.parametrize(
    "line, field, words",
    [
        ('bias_current_doubling = "-10"\n', "bias_current_doubling", "0 (no doubling) or more"),
        ('input_differential_max = "-1"\n', "input_differential_max", "0 (not rated) or more"),
        ('input_differential_max = "lots"\n', "input_differential_max", "voltage"),
    ],
)
def test_a_bad_limit_is_a_located_error(line, field, words):
    (problem,) = problems_of(line)
    assert problem.field == f"part.p.{field}" and problem.line == 12 and words in problem.message


def test_presets_show_prints_every_limit_in_units():
    from railroom.tui.subcommands.presets import part_lines

    (part,) = part_of(
        'temperature_range = ["-40", "125"]\nbias_current_doubling = "10"\n'
        'input_differential_max = "0.7"\nphase_reversal = true\n' + CURVE
    ).values()
    text = "\n".join(part_lines(part))
    assert "temperature_range  -40 to 125 °C" in text
    assert "doubles every 10 °C above 25 °C" in text
    assert "input_differential_max 700 mV" in text
    assert "phase_reversal     yes" in text
    assert "10 mA: upper 1.5 V, lower 2 V" in text
    (plain,) = part_of().values()
    assert "phase_reversal" not in "\n".join(part_lines(plain))


def test_the_shipped_presets_carry_the_limits_and_follow_the_schema():
    import jsonschema
    import tomllib
    from railroom.engine.formats.presets import read_preset_file, shipped_folder
    from railroom.engine.formats.schema import preset_schema

    path = shipped_folder() / "generic.toml"
    parts, problems = read_preset_file(path)
    assert problems == []
    assert all(p.temperature_range is not None for p in parts)
    assert any(p.output_headroom_curve for p in parts) and any(p.phase_reversal for p in parts)
    assert any(p.input_differential_max for p in parts) and any(p.bias_current_doubling for p in parts)
    jsonschema.validate(tomllib.loads(path.read_text(encoding="utf-8")), preset_schema())


def test_the_form_writes_a_flag_as_a_boolean_and_a_curve_as_points():
    import tomlkit
    from railroom.engine.formats.preset_editing import raw_fields, set_fields

    text = f"[part.p]\n{BASE}"
    edited = set_fields(text, "p", {"phase_reversal": "true", "output_headroom_curve": "0 1 1; 10m 1.5 2"})
    table = tomlkit.parse(edited)["part"]["p"]
    assert table["phase_reversal"] is True
    assert table["output_headroom_curve"] == [["0", "1", "1"], ["10m", "1.5", "2"]]
    assert raw_fields(edited, "p")["output_headroom_curve"] == "0 1 1; 10m 1.5 2"
    assert raw_fields(edited, "p")["phase_reversal"] == "true"
    parts, problems = parts_from_text(edited, "lab.toml")
    assert problems == [] and parts[0].output_headroom_curve == ((0.0, 1.0, 1.0), (0.01, 1.5, 2.0))


def test_an_inverting_schmitt_trigger_input_against_its_threshold():
    # invert = true (Sedra & Smith, ch. 18): the signal at -, V+ = (ref r2 + Vout r1)/(r1 + r2) =
    # 11 x 10k / 110k = 1 V while the output is high; the input at -5 V leaves 6 V across the inputs
    fields = 'block = "schmitt"\nr1 = "10k"\nr2 = "100k"\ninvert = true'
    stage = run(alarm(fields, level='["-5", "5"]'), part_of('input_differential_max = "7"\n')).stages[0]
    assert stage.measure.input_differential == pytest.approx(11 * 10e3 / 110e3 + 5, rel=1e-9)
    assert stage.margins["input-differential"] == pytest.approx(1.0, rel=1e-9) and stage.go

"""opamp.lifted and the mixed_* operations: a real operand cast to complex before it meets a
complex one gives numpy's own result bit for bit (numpy casts float64 to complex128 as x + 0j
before a complex ufunc loop; checked here against plain numpy, signed zeros, inf and NaN included)."""

import numpy as np
import pytest

from railroom.engine.circuit.opamp import lifted, mixed_add, mixed_div, mixed_mul, mixed_sub


def _complex(rng, rows, cols):
    a = rng.standard_normal((rows, cols)) + 1j * rng.standard_normal((rows, cols))
    a[::7] = 0.0
    a[::11] = complex(-0.0, -0.0)
    a.real[::13] = -0.0
    a[::17, 1] = np.inf
    return np.asfortranarray(a)


def _real(rng, rows):
    c = rng.standard_normal((rows, 1))
    c[::5] = 0.0
    c[::9] = -0.0
    c[::23] = np.nan
    return c


@pytest.mark.parametrize(
    "mixed, plain",
    [(mixed_add, np.add), (mixed_sub, np.subtract), (mixed_mul, np.multiply), (mixed_div, np.divide)],
)
def test_mixed_operations_give_numpys_bits(mixed, plain):
    rng = np.random.default_rng(3)
    t, c = _complex(rng, 600, 9), _real(rng, 600)
    with np.errstate(all="ignore"):
        for a, b in ((t, c), (c, t), (c, c), (t, t), (1.0, t), (c, 2.5)):
            want, got = plain(a, b), mixed(a, b)
            assert got.dtype == want.dtype
            w = np.ascontiguousarray(want).view(np.float64)  # both parts of a complex value
            g = np.ascontiguousarray(got).view(np.float64)
            assert np.array_equal(np.isnan(w), np.isnan(g))
            same = (w.view(np.uint64) == g.view(np.uint64)) | np.isnan(w)  # NaN payloads aside
            assert same.all()


def test_lifted_leaves_what_meets_no_complex_array():
    real = np.ones((3, 1))
    assert lifted(real, np.ones((3, 4))) is real  # real meets real: stays real
    assert lifted(2.0, np.ones((3, 4), dtype=complex)) == 2.0  # a Python scalar is cast by numpy
    assert lifted(real, np.ones((3, 4), dtype=complex)).dtype == np.complex128


@pytest.mark.parametrize("name", ["sallen_key_lowpass", "sallen_key_highpass", "mfb_lowpass", "mfb_bandpass"])
def test_output_transfer_is_the_responses_own(name):
    """filters.output_transfer (what real_peaks reads) is respond(...).output's "in" transfer bit
    for bit, and that transfer is the textbook section's at DC with a near-ideal op amp
    (Franco ch. 3-4: H0 = 1 for the unity Sallen-Key low-pass, -r2/r1 for the MFB low-pass,
    0 for the high-pass and band-pass)."""
    from railroom.engine.circuit.blocks import BLOCKS
    from railroom.engine.circuit.blocks.filters import output_transfer
    from railroom.engine.circuit.opamp import TWO_PI

    block = BLOCKS[name]
    rows = 6
    rng = np.random.default_rng(5)
    v = {
        "r1": 10e3 * (1 + 0.05 * rng.standard_normal((rows, 1))),
        "r2": 22e3 * (1 + 0.05 * rng.standard_normal((rows, 1))),
        "r3": 4.7e3 * (1 + 0.05 * rng.standard_normal((rows, 1))),
        "c1": 10e-9 * (1 + 0.05 * rng.standard_normal((rows, 1))),
        "c2": 4.7e-9 * (1 + 0.05 * rng.standard_normal((rows, 1))),
    }
    s = 1j * TWO_PI * np.hstack((np.zeros((rows, 1)), np.geomspace(10.0, 1e5, 15)[None, :].repeat(rows, 0)))
    inverse_gain = (1.0 + s / (TWO_PI * 10.0)) / 1e9  # A0 = 1e9, one pole: near ideal at DC
    want = block.respond(v, s, inverse_gain, 0.0, False).output.transfers["in"]
    got = output_transfer(block, v, s, inverse_gain)
    assert np.array_equal(
        np.ascontiguousarray(got).view(np.uint64), np.ascontiguousarray(want).view(np.uint64)
    )
    dc = {"sallen_key_lowpass": 1.0, "mfb_lowpass": -(v["r2"] / v["r1"])[:, 0]}.get(name, 0.0)
    assert np.allclose(got[:, 0].real, dc, rtol=1e-6, atol=1e-9)

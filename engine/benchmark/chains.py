"""The bench's chains beside figures.reference_text: twelve stages with active filters and one
failing stage, and the bench parts as a preset file for whole-process runs of `railroom check`.

All parts and values are generic and illustrative (figures.PARTS), never a maker's.
"""

from __future__ import annotations

from collections.abc import Mapping

# block, part, rails, fields. Stage 11 (gain 3 about 0 V on the 5 V rails, fed 1.6 V +/- 1.2 V)
# clips in every draw; the converter input after it is fed the clipped signal.
FILTER_STAGES = [
    ("follower", "bipolar", "analog", {}),
    ("sallen_key_lowpass", "bipolar", "analog", {"r1": "10k", "r2": "10k", "c1": "22n 5%", "c2": "10n 5%"}),
    ("noninverting", "precision", "analog", {"rf": "10k 0.1%", "rg": "10k 0.1%"}),
    (
        "mfb_bandpass",
        "precision",
        "analog",
        {"r1": "10k", "r2": "100k", "r3": "1k", "c1": "10n 5%", "c2": "10n 5%"},
    ),
    ("inverting", "bipolar", "analog", {"rin": "10k", "rf": "10k"}),
    (
        "mfb_lowpass",
        "bipolar",
        "analog",
        {"r1": "10k", "r2": "10k", "r3": "10k", "c1": "22n 5%", "c2": "4n7 5%"},
    ),
    (
        "sallen_key_lowpass",
        "precision",
        "analog",
        {"r1": "10k", "r2": "10k", "c1": "10n 5%", "c2": "10n 5%", "rf": "10k", "rg": "10k"},
    ),
    ("follower", "bipolar", "analog", {"load": "10k"}),
    ("inverting", "rro", "converter", {"rin": "20k", "rf": "5k", "ref": "1.25"}),
    ("follower", "rro", "converter", {}),
    ("noninverting", "rro", "converter", {"rf": "20k", "rg": "10k"}),
    ("adc", None, None, {"low": "0.2", "high": "4.8"}),
]


def chain_head(title: str) -> str:
    """The bench chains' conditions, rails and source (figures.reference_text and the filter chain)."""
    return f"""format = 1
title = "{title}"
[conditions]
temperature = [-20, 70]
margin = "20m"
default_tolerance = "1%"
[rails.analog]
positive = "12"
negative = "-12"
tolerance = "5%"
[rails.converter]
positive = "5"
negative = "0"
tolerance = "2%"
[source]
level = ["-20m", "20m"]
amplitude = "200m"
band = ["10", "10k"]
impedance = "50"
"""


FILTER_HEAD = chain_head("bench: twelve stages with filters, one failing")


def stages_text(stages) -> str:
    """[[stage]] tables from (block, part, rails, fields) rows, named "stage 1" on."""
    text = ""
    for i, (block, part, rails, fields) in enumerate(stages, start=1):
        text += f'[[stage]]\nname = "stage {i}"\nblock = "{block}"\n'
        text += f'part = "{part}"\nrails = "{rails}"\n' if part else ""
        text += "".join(f'{k} = "{v}"\n' for k, v in fields.items())
    return text


QUICK_STAGES = (0, 1, 3, 5, 10, 11)  # --quick: one of each filter block, the failing stage, the converter


def filter_chain_text(quick: bool = False) -> str:
    """The twelve filter stages; `quick`: six of them (QUICK_STAGES), for tests."""
    picked = [FILTER_STAGES[i] for i in QUICK_STAGES] if quick else FILTER_STAGES
    return FILTER_HEAD + stages_text(picked)


def presets_text(parts: Mapping) -> str:
    """The parts as a preset file (README, the preset file), every value in SI units."""
    text = "# railroom bench: generic illustrative parts\n"
    for part in parts.values():
        text += f"\n[part.{part.id}]\ndescription = {part.description!r}\n".replace("'", '"')
        pairs = ("supply", "output_headroom", "input_headroom")
        for name in pairs:
            low, high = getattr(part, name)
            text += f'{name} = ["{low!r}", "{high!r}"]\n'
        for name in (
            "supply_abs_max",
            "output_resistance",
            "gbw",
            "slew",
            "open_loop_gain",
            "offset",
            "offset_drift",
            "bias_current",
            "output_current",
        ):
            text += f'{name} = "{getattr(part, name)!r}"\n'
    return text

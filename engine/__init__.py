"""railroom engine: pure numeric core (no printing, no UI imports).

This is the engine's one API: the interface and the command line (tui/) import from here and
from no submodule (tests/tui/test_engine_imports.py holds them to it). Names load on first use,
so that importing a submodule (railroom.engine.model, say) stays cheap:

    from railroom.engine import load_checked, analyse, chain_report
    chain, library = load_checked("board.toml")
    report = chain_report(analyse(chain, library.parts))
"""

from __future__ import annotations

from importlib import import_module
from typing import TYPE_CHECKING

# exported name -> "module" under railroom.engine that defines it, or "module:name" where the
# module's own name would be ambiguous here
_EXPORTS = {
    # reading a chain
    "load_checked": "analysis",
    "check_parts": "analysis",
    "load_chain": "files",
    "chain_from_text": "files",
    "demo_file": "demos",
    # checking it
    "analyse": "analysis",
    "Cancelled": "methods.montecarlo",
    "METHODS": "model",
    "BLOCKS": "blocks",
    # the model and its problems
    "Chain": "model",
    "Part": "model",
    "InputError": "model",
    "Problem": "model",
    # the results and the table of checks
    "ChainResult": "results",
    "StageResult": "results",
    "OpAmpMeasure": "results",
    "CHECKS": "results",
    "CHECK_TABLE": "results",
    "check_unit": "results",
    "margin_words": "results",
    "needed_and_limit": "results",
    "VOLTAGE_CHECKS": "results",
    "GAIN_ERROR_CAUTION": "checks",
    "yield_words": "methods.rare",
    "failing_draws": "methods.rare",
    "wilson": "methods.rare",
    # values as typed and shown
    "Quantity": "values",
    "ValueTextError": "values",
    "parse_value": "values",
    "parse_quantity": "values",
    "format_si": "values",
    "format_span": "values",
    "escaped": "values",
    "visible": "values",
    "terminal_json": "values",
    # editing a chain's text
    "FieldShape": "editing",
    "FORM_SECTIONS": "editing:SECTIONS",
    "value_problem": "editing",
    "toml_value": "editing",
    "stage_shapes": "editing",
    "stage_fields": "editing",
    "section_fields": "editing",
    "set_stage_field": "editing",
    "set_section_field": "editing",
    "starter_stage": "editing",
    "add_stage": "editing",
    "remove_stage": "editing",
    "move_stage": "editing",
    # part presets
    "Library": "presets",
    "PART_FIELDS": "presets",
    "PART_UNITS": "presets:UNITS",
    "PAIR_SIDES": "presets",
    "load_library": "presets",
    "missing_folders": "presets",
    "read_preset_file": "presets",
    "search_order": "presets",
    "shipped_folder": "presets",
    "user_folder": "presets",
    "LIMIT_FIELDS": "part_limits",
    "curve_from_text": "part_limits",
    # editing part presets
    "ChangedOnDisk": "preset_editing",
    "EditSession": "preset_editing",
    "PresetEditError": "preset_editing",
    "Raw": "preset_editing",
    "check_part_id": "preset_editing",
    "copy_part": "preset_editing",
    "delete_part": "preset_editing",
    "is_shipped": "preset_editing",
    "open_preset_file": "preset_editing",
    "rename_part": "preset_editing",
    "save_preset_text": "preset_editing",
    # saving
    "write_atomic": "atomic",
    "Fingerprint": "atomic",
    "fingerprint": "atomic",
    # reports
    "chain_report": "report",
    "markdown_report": "markdown",
    "SuiteInput": "junit",
    "junit_xml": "junit",
    "SCHEMAS": "schema",
    "block_names": "block_help",
    "describe_block": "block_help:describe",
    "PICTURE_SUFFIXES": "picture:SUFFIXES",
    "write_picture": "picture",
    "embed_in_markdown": "picture",
    "usual_mode": "picture",
    # comparing two versions
    "load_against": "compare",
    "compare_results": "compare",
    "change_rows": "compare",
    "verdict_line": "compare",
    "against_report": "compare",
    "against_markdown": "compare",
    # the bench
    "bench_figures": "bench:run",
}

if TYPE_CHECKING:  # the same names for the type checker (a test keeps the two in step)
    from railroom.engine.analysis import load_checked as load_checked
    from railroom.engine.analysis import check_parts as check_parts
    from railroom.engine.files import load_chain as load_chain
    from railroom.engine.files import chain_from_text as chain_from_text
    from railroom.engine.demos import demo_file as demo_file
    from railroom.engine.analysis import analyse as analyse
    from railroom.engine.methods.montecarlo import Cancelled as Cancelled
    from railroom.engine.model import METHODS as METHODS
    from railroom.engine.blocks import BLOCKS as BLOCKS
    from railroom.engine.model import Chain as Chain
    from railroom.engine.model import Part as Part
    from railroom.engine.model import InputError as InputError
    from railroom.engine.model import Problem as Problem
    from railroom.engine.results import ChainResult as ChainResult
    from railroom.engine.results import StageResult as StageResult
    from railroom.engine.results import OpAmpMeasure as OpAmpMeasure
    from railroom.engine.results import CHECKS as CHECKS
    from railroom.engine.results import CHECK_TABLE as CHECK_TABLE
    from railroom.engine.results import check_unit as check_unit
    from railroom.engine.results import margin_words as margin_words
    from railroom.engine.results import needed_and_limit as needed_and_limit
    from railroom.engine.results import VOLTAGE_CHECKS as VOLTAGE_CHECKS
    from railroom.engine.checks import GAIN_ERROR_CAUTION as GAIN_ERROR_CAUTION
    from railroom.engine.methods.rare import yield_words as yield_words
    from railroom.engine.methods.rare import failing_draws as failing_draws
    from railroom.engine.methods.rare import wilson as wilson
    from railroom.engine.values import Quantity as Quantity
    from railroom.engine.values import ValueTextError as ValueTextError
    from railroom.engine.values import parse_value as parse_value
    from railroom.engine.values import parse_quantity as parse_quantity
    from railroom.engine.values import format_si as format_si
    from railroom.engine.values import format_span as format_span
    from railroom.engine.values import escaped as escaped
    from railroom.engine.values import visible as visible
    from railroom.engine.values import terminal_json as terminal_json
    from railroom.engine.editing import FieldShape as FieldShape
    from railroom.engine.editing import SECTIONS as FORM_SECTIONS  # noqa: F401 - exported
    from railroom.engine.editing import value_problem as value_problem
    from railroom.engine.editing import toml_value as toml_value
    from railroom.engine.editing import stage_shapes as stage_shapes
    from railroom.engine.editing import stage_fields as stage_fields
    from railroom.engine.editing import section_fields as section_fields
    from railroom.engine.editing import set_stage_field as set_stage_field
    from railroom.engine.editing import set_section_field as set_section_field
    from railroom.engine.editing import starter_stage as starter_stage
    from railroom.engine.editing import add_stage as add_stage
    from railroom.engine.editing import remove_stage as remove_stage
    from railroom.engine.editing import move_stage as move_stage
    from railroom.engine.presets import Library as Library
    from railroom.engine.presets import PART_FIELDS as PART_FIELDS
    from railroom.engine.presets import UNITS as PART_UNITS  # noqa: F401 - exported
    from railroom.engine.presets import PAIR_SIDES as PAIR_SIDES
    from railroom.engine.presets import load_library as load_library
    from railroom.engine.presets import missing_folders as missing_folders
    from railroom.engine.presets import read_preset_file as read_preset_file
    from railroom.engine.presets import search_order as search_order
    from railroom.engine.presets import shipped_folder as shipped_folder
    from railroom.engine.presets import user_folder as user_folder
    from railroom.engine.part_limits import LIMIT_FIELDS as LIMIT_FIELDS
    from railroom.engine.part_limits import curve_from_text as curve_from_text
    from railroom.engine.preset_editing import ChangedOnDisk as ChangedOnDisk
    from railroom.engine.preset_editing import EditSession as EditSession
    from railroom.engine.preset_editing import PresetEditError as PresetEditError
    from railroom.engine.preset_editing import Raw as Raw
    from railroom.engine.preset_editing import check_part_id as check_part_id
    from railroom.engine.preset_editing import copy_part as copy_part
    from railroom.engine.preset_editing import delete_part as delete_part
    from railroom.engine.preset_editing import is_shipped as is_shipped
    from railroom.engine.preset_editing import open_preset_file as open_preset_file
    from railroom.engine.preset_editing import rename_part as rename_part
    from railroom.engine.preset_editing import save_preset_text as save_preset_text
    from railroom.engine.atomic import write_atomic as write_atomic
    from railroom.engine.atomic import Fingerprint as Fingerprint
    from railroom.engine.atomic import fingerprint as fingerprint
    from railroom.engine.report import chain_report as chain_report
    from railroom.engine.markdown import markdown_report as markdown_report
    from railroom.engine.junit import SuiteInput as SuiteInput
    from railroom.engine.junit import junit_xml as junit_xml
    from railroom.engine.schema import SCHEMAS as SCHEMAS
    from railroom.engine.block_help import block_names as block_names
    from railroom.engine.block_help import describe as describe_block  # noqa: F401 - exported
    from railroom.engine.picture import SUFFIXES as PICTURE_SUFFIXES  # noqa: F401 - exported
    from railroom.engine.picture import write_picture as write_picture
    from railroom.engine.picture import embed_in_markdown as embed_in_markdown
    from railroom.engine.picture import usual_mode as usual_mode
    from railroom.engine.compare import load_against as load_against
    from railroom.engine.compare import compare_results as compare_results
    from railroom.engine.compare import change_rows as change_rows
    from railroom.engine.compare import verdict_line as verdict_line
    from railroom.engine.compare import against_report as against_report
    from railroom.engine.compare import against_markdown as against_markdown
    from railroom.engine.bench import run as bench_figures  # noqa: F401 - exported

__all__ = sorted(_EXPORTS)


def __getattr__(name: str):
    """PEP 562 module __getattr__: import the defining module only when a name is first used."""
    where = _EXPORTS.get(name)
    if where is None:
        raise AttributeError(f"module 'railroom.engine' has no attribute {name!r}")
    module, _, attribute = where.partition(":")
    value = getattr(import_module(f"railroom.engine.{module}"), attribute or name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted({*globals(), *__all__})

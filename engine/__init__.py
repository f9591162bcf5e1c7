"""railroom engine: pure numeric core (no printing, no UI imports).

This is the engine's one API: the interface and the command line (tui/) import from here and
from no submodule (tests/tui/test_engine_imports.py holds them to it). Names load on first use,
so that importing a submodule (railroom.engine.circuit.model, say) stays cheap:

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
    "load_checked": "formats.loading",
    "check_parts": "formats.loading",
    "load_chain": "formats.chain_file",
    "chain_from_text": "formats.chain_file",
    "demo_file": "demos",
    # checking it
    "analyse": "analysis",
    "Cancelled": "methods.montecarlo",
    "METHODS": "circuit.model",
    "BLOCKS": "circuit.blocks",
    # the model and its problems
    "Chain": "circuit.model",
    "Part": "circuit.model",
    "InputError": "circuit.model",
    "Problem": "circuit.model",
    "stage_parents": "circuit.model",
    "tree_rows": "circuit.stage_tree",
    "branched": "circuit.stage_tree",
    # the results and the table of checks
    "ChainResult": "verdict.results",
    "StageResult": "verdict.results",
    "OpAmpMeasure": "verdict.results",
    "CHECKS": "verdict.results",
    "CHECK_TABLE": "verdict.results",
    "check_unit": "verdict.results",
    "margin_words": "verdict.results",
    "needed_and_limit": "verdict.results",
    "VOLTAGE_CHECKS": "verdict.results",
    "GAIN_ERROR_CAUTION": "verdict.judge",
    "yield_words": "methods.rare",
    "failing_draws": "methods.rare",
    "wilson": "methods.rare",
    # values as typed and shown
    "Quantity": "formats.values",
    "ValueTextError": "formats.values",
    "parse_value": "formats.values",
    "parse_quantity": "formats.values",
    "format_si": "formats.values",
    "format_span": "formats.values",
    "escaped": "formats.values",
    "visible": "formats.values",
    "terminal_json": "formats.values",
    # editing a chain's text
    "FieldShape": "formats.chain_editing",
    "FORM_SECTIONS": "formats.chain_editing:SECTIONS",
    "value_problem": "formats.chain_editing",
    "toml_value": "formats.chain_editing",
    "stage_shapes": "formats.chain_editing",
    "stage_fields": "formats.chain_editing",
    "section_fields": "formats.chain_editing",
    "set_stage_field": "formats.chain_editing",
    "set_section_field": "formats.chain_editing",
    "starter_stage": "formats.chain_editing",
    "add_stage": "formats.chain_editing",
    "remove_stage": "formats.chain_editing",
    "move_stage": "formats.chain_editing",
    "add_net": "formats.net_editing",
    "remove_net": "formats.net_editing",
    "new_net_problem": "formats.net_editing",
    "NetInUse": "formats.net_editing",
    "net_readers": "formats.net_editing",
    # part presets
    "Library": "formats.presets",
    "PART_FIELDS": "formats.presets",
    "PART_UNITS": "formats.presets:UNITS",
    "PAIR_SIDES": "formats.presets",
    "load_library": "formats.presets",
    "missing_folders": "formats.presets",
    "read_preset_file": "formats.presets",
    "search_order": "formats.presets",
    "shipped_folder": "formats.presets",
    "user_folder": "formats.presets",
    "LIMIT_FIELDS": "circuit.part_limits",
    "curve_from_text": "circuit.part_limits",
    # editing part presets
    "ChangedOnDisk": "formats.preset_editing",
    "EditSession": "formats.preset_editing",
    "PresetEditError": "formats.preset_editing",
    "Raw": "formats.preset_editing",
    "check_part_id": "formats.preset_editing",
    "copy_part": "formats.preset_editing",
    "delete_part": "formats.preset_editing",
    "is_shipped": "formats.preset_editing",
    "open_preset_file": "formats.preset_editing",
    "rename_part": "formats.preset_editing",
    "save_preset_text": "formats.preset_editing",
    # saving
    "write_atomic": "formats.atomic",
    "Fingerprint": "formats.atomic",
    "fingerprint": "formats.atomic",
    # reports
    "chain_report": "reports.json_report",
    "markdown_report": "reports.markdown",
    "SuiteInput": "reports.junit",
    "junit_xml": "reports.junit",
    "SCHEMAS": "formats.schema",
    "block_names": "reports.block_help",
    "describe_block": "reports.block_help:describe",
    "PICTURE_SUFFIXES": "reports.picture:SUFFIXES",
    "write_picture": "reports.picture",
    "embed_in_markdown": "reports.picture",
    "usual_mode": "reports.picture",
    # comparing two versions
    "load_against": "reports.compare",
    "compare_results": "reports.compare",
    "change_rows": "reports.compare",
    "verdict_line": "reports.compare",
    "against_report": "reports.compare",
    "against_markdown": "reports.compare",
    # the bench
    "bench_figures": "benchmark.figures:run",
    "bench_chain_texts": "benchmark.figures:chain_texts",
    "bench_presets_text": "benchmark.figures:presets_text",
    "NetValue": "circuit.model",
    "stage_quantities": "walks.preparation",
    "net_shapes": "formats.chain_editing",
    "net_fields": "formats.chain_editing",
    "set_net_field": "formats.chain_editing",
    "net_span": "circuit.nets",
}

if TYPE_CHECKING:  # the same names for the type checker (a test keeps the two in step)
    from railroom.engine.formats.loading import load_checked as load_checked
    from railroom.engine.formats.loading import check_parts as check_parts
    from railroom.engine.formats.chain_file import load_chain as load_chain
    from railroom.engine.formats.chain_file import chain_from_text as chain_from_text
    from railroom.engine.demos import demo_file as demo_file
    from railroom.engine.analysis import analyse as analyse
    from railroom.engine.methods.montecarlo import Cancelled as Cancelled
    from railroom.engine.circuit.model import METHODS as METHODS
    from railroom.engine.circuit.blocks import BLOCKS as BLOCKS
    from railroom.engine.circuit.model import Chain as Chain
    from railroom.engine.circuit.model import Part as Part
    from railroom.engine.circuit.model import InputError as InputError
    from railroom.engine.circuit.model import Problem as Problem
    from railroom.engine.circuit.model import stage_parents as stage_parents
    from railroom.engine.circuit.stage_tree import branched as branched
    from railroom.engine.circuit.stage_tree import tree_rows as tree_rows
    from railroom.engine.verdict.results import ChainResult as ChainResult
    from railroom.engine.verdict.results import StageResult as StageResult
    from railroom.engine.verdict.results import OpAmpMeasure as OpAmpMeasure
    from railroom.engine.verdict.results import CHECKS as CHECKS
    from railroom.engine.verdict.results import CHECK_TABLE as CHECK_TABLE
    from railroom.engine.verdict.results import check_unit as check_unit
    from railroom.engine.verdict.results import margin_words as margin_words
    from railroom.engine.verdict.results import needed_and_limit as needed_and_limit
    from railroom.engine.verdict.results import VOLTAGE_CHECKS as VOLTAGE_CHECKS
    from railroom.engine.verdict.judge import GAIN_ERROR_CAUTION as GAIN_ERROR_CAUTION
    from railroom.engine.methods.rare import yield_words as yield_words
    from railroom.engine.methods.rare import failing_draws as failing_draws
    from railroom.engine.methods.rare import wilson as wilson
    from railroom.engine.formats.values import Quantity as Quantity
    from railroom.engine.formats.values import ValueTextError as ValueTextError
    from railroom.engine.formats.values import parse_value as parse_value
    from railroom.engine.formats.values import parse_quantity as parse_quantity
    from railroom.engine.formats.values import format_si as format_si
    from railroom.engine.formats.values import format_span as format_span
    from railroom.engine.formats.values import escaped as escaped
    from railroom.engine.formats.values import visible as visible
    from railroom.engine.formats.values import terminal_json as terminal_json
    from railroom.engine.formats.chain_editing import FieldShape as FieldShape
    from railroom.engine.formats.chain_editing import SECTIONS as FORM_SECTIONS  # noqa: F401 - exported
    from railroom.engine.formats.chain_editing import value_problem as value_problem
    from railroom.engine.formats.chain_editing import toml_value as toml_value
    from railroom.engine.formats.chain_editing import stage_shapes as stage_shapes
    from railroom.engine.formats.chain_editing import stage_fields as stage_fields
    from railroom.engine.formats.chain_editing import section_fields as section_fields
    from railroom.engine.formats.chain_editing import set_stage_field as set_stage_field
    from railroom.engine.formats.chain_editing import set_section_field as set_section_field
    from railroom.engine.formats.chain_editing import starter_stage as starter_stage
    from railroom.engine.formats.chain_editing import add_stage as add_stage
    from railroom.engine.formats.chain_editing import remove_stage as remove_stage
    from railroom.engine.formats.net_editing import add_net as add_net
    from railroom.engine.formats.net_editing import remove_net as remove_net
    from railroom.engine.formats.net_editing import new_net_problem as new_net_problem
    from railroom.engine.formats.net_editing import NetInUse as NetInUse
    from railroom.engine.formats.net_editing import net_readers as net_readers
    from railroom.engine.formats.chain_editing import move_stage as move_stage
    from railroom.engine.formats.presets import Library as Library
    from railroom.engine.formats.presets import PART_FIELDS as PART_FIELDS
    from railroom.engine.formats.presets import UNITS as PART_UNITS  # noqa: F401 - exported
    from railroom.engine.formats.presets import PAIR_SIDES as PAIR_SIDES
    from railroom.engine.formats.presets import load_library as load_library
    from railroom.engine.formats.presets import missing_folders as missing_folders
    from railroom.engine.formats.presets import read_preset_file as read_preset_file
    from railroom.engine.formats.presets import search_order as search_order
    from railroom.engine.formats.presets import shipped_folder as shipped_folder
    from railroom.engine.formats.presets import user_folder as user_folder
    from railroom.engine.circuit.part_limits import LIMIT_FIELDS as LIMIT_FIELDS
    from railroom.engine.circuit.part_limits import curve_from_text as curve_from_text
    from railroom.engine.formats.preset_editing import ChangedOnDisk as ChangedOnDisk
    from railroom.engine.formats.preset_editing import EditSession as EditSession
    from railroom.engine.formats.preset_editing import PresetEditError as PresetEditError
    from railroom.engine.formats.preset_editing import Raw as Raw
    from railroom.engine.formats.preset_editing import check_part_id as check_part_id
    from railroom.engine.formats.preset_editing import copy_part as copy_part
    from railroom.engine.formats.preset_editing import delete_part as delete_part
    from railroom.engine.formats.preset_editing import is_shipped as is_shipped
    from railroom.engine.formats.preset_editing import open_preset_file as open_preset_file
    from railroom.engine.formats.preset_editing import rename_part as rename_part
    from railroom.engine.formats.preset_editing import save_preset_text as save_preset_text
    from railroom.engine.formats.atomic import write_atomic as write_atomic
    from railroom.engine.formats.atomic import Fingerprint as Fingerprint
    from railroom.engine.formats.atomic import fingerprint as fingerprint
    from railroom.engine.reports.json_report import chain_report as chain_report
    from railroom.engine.reports.markdown import markdown_report as markdown_report
    from railroom.engine.reports.junit import SuiteInput as SuiteInput
    from railroom.engine.reports.junit import junit_xml as junit_xml
    from railroom.engine.formats.schema import SCHEMAS as SCHEMAS
    from railroom.engine.reports.block_help import block_names as block_names
    from railroom.engine.reports.block_help import describe as describe_block  # noqa: F401 - exported
    from railroom.engine.reports.picture import SUFFIXES as PICTURE_SUFFIXES  # noqa: F401 - exported
    from railroom.engine.reports.picture import write_picture as write_picture
    from railroom.engine.reports.picture import embed_in_markdown as embed_in_markdown
    from railroom.engine.reports.picture import usual_mode as usual_mode
    from railroom.engine.reports.compare import load_against as load_against
    from railroom.engine.reports.compare import compare_results as compare_results
    from railroom.engine.reports.compare import change_rows as change_rows
    from railroom.engine.reports.compare import verdict_line as verdict_line
    from railroom.engine.reports.compare import against_report as against_report
    from railroom.engine.reports.compare import against_markdown as against_markdown
    from railroom.engine.benchmark.figures import run as bench_figures  # noqa: F401 - exported
    from railroom.engine.benchmark.figures import chain_texts as bench_chain_texts  # noqa: F401 - exported
    from railroom.engine.benchmark.figures import presets_text as bench_presets_text  # noqa: F401 - exported
    from railroom.engine.circuit.model import NetValue as NetValue
    from railroom.engine.walks.preparation import stage_quantities as stage_quantities
    from railroom.engine.formats.chain_editing import net_shapes as net_shapes
    from railroom.engine.formats.chain_editing import net_fields as net_fields
    from railroom.engine.formats.chain_editing import set_net_field as set_net_field
    from railroom.engine.circuit.nets import net_span as net_span

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

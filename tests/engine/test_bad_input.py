"""Every bad input is a located problem: file, line and field named, all problems at once.

Source: the README's File formats ("A value that cannot be read is an error naming the file, the line, the
field and the text") and section 4 (one clear message per problem, never a traceback). The line
numbers below are counted by hand in BASE.
"""

import pytest

from railroom.engine.formats.loading import load_checked
from railroom.engine.formats.chain_file import chain_from_text, load_chain
from railroom.engine.circuit.model import InputError
from railroom.engine.walks.preparation import plan_chain
from railroom.engine.formats.presets import load_library, search_order

BASE = """format = 1
[rails.main]
positive = "15"
negative = "-15"
[source]
level = ["0", "1"]
band = ["10", "20k"]
[[stage]]
block = "noninverting"
part = "generic-bipolar-15v"
rf = "90k"
rg = "10k"
"""
# line numbers in BASE: 3 positive, 7 band, 8 [[stage]], 9 block, 10 part, 11 rf, 12 rg


def problems_of(text: str, path: str = "chain.toml"):
    with pytest.raises(InputError) as caught:
        chain_from_text(text, path)
    return caught.value.problems


CASES = {
    "bad TOML": (BASE.replace('rf = "90k"', 'rf = "90k'), 11, "(file)", ["not valid TOML"]),
    "unknown block": (
        BASE.replace('"noninverting"', '"noninvertng"'),
        9,
        "stage.1.block",
        ["noninvertng", "noninverting"],
    ),
    "missing field": (BASE.replace('rf = "90k"\n', ""), 8, "stage.1.rf", ["missing"]),
    "misspelled field": (
        BASE.replace('rf = "90k"', 'rf = "90k"\nrff = "1k"'),
        12,
        "stage.1.rff",
        ["unknown field", "did you mean 'rf'"],
    ),
    "unreadable value": (BASE.replace('rf = "90k"', 'rf = "90q"'), 11, "stage.1.rf", ['"90q"', "resistance"]),
    "negative resistor": (
        BASE.replace('rf = "90k"', 'rf = "-90k"'),
        11,
        "stage.1.rf",
        ["greater than zero", '"-90k"'],
    ),
    "zero resistor": (BASE.replace('rg = "10k"', 'rg = "0"'), 12, "stage.1.rg", ["greater than zero"]),
    "rails reversed": (
        BASE.replace('positive = "15"', 'positive = "-20"'),
        3,
        "rails.main.positive",
        ["reversed"],
    ),
    "band reversed": (BASE.replace('["10", "20k"]', '["20k", "10"]'), 7, "source.band", ["reversed"]),
    "differential into noninverting": (
        BASE.replace('level = ["0", "1"]', 'kind = "differential"\nlevel = ["0", "1"]'),
        10,
        "stage.1.block",
        ["differential", "noninverting"],
    ),
}


@pytest.mark.parametrize("case", list(CASES))
def test_problem_names_file_line_and_field(case):
    text, line, field, words = CASES[case]
    problems = problems_of(text, "rig/chain.toml")
    assert len(problems) == 1, problems
    problem = problems[0]
    assert (problem.file, problem.line, problem.field) == ("rig/chain.toml", line, field)
    for word in words:
        assert word in problem.message
    assert str(problem).startswith(f"rig/chain.toml:{line}: {field}: ")


def test_every_problem_in_a_file_is_reported_at_once():
    text = (
        BASE.replace('positive = "15"', 'positive = "-20"')
        .replace('["10", "20k"]', '["20k", "10"]')
        .replace('rf = "90k"', 'rff = "90k"')
        .replace('rg = "10k"', 'rg = "0"')
    )
    found = {(p.line, p.field) for p in problems_of(text)}
    assert found == {
        (3, "rails.main.positive"),
        (7, "source.band"),
        (11, "stage.1.rff"),
        (8, "stage.1.rf"),
        (12, "stage.1.rg"),
    }


def test_unknown_part_is_located_by_load_checked_and_plan_chain(tmp_path):
    path = tmp_path / "chain.toml"
    path.write_text(BASE.replace("generic-bipolar-15v", "generic-bipolar-15"), encoding="utf-8")
    with pytest.raises(InputError) as caught:
        load_checked(str(path))
    (problem,) = caught.value.problems
    assert (problem.file, problem.line, problem.field) == (str(path), 10, "stage.1.part")  # the part = line
    assert "unknown part 'generic-bipolar-15'" in problem.message
    assert "did you mean 'generic-bipolar-15v'" in problem.message
    chain = load_chain(path)
    with pytest.raises(InputError) as again:
        plan_chain(chain, load_library(search_order()).parts)
    assert again.value.problems == caught.value.problems


def test_unreadable_file_is_a_problem_not_a_traceback(tmp_path):
    missing = tmp_path / "absent.toml"
    with pytest.raises(InputError) as caught:
        load_chain(missing)
    (problem,) = caught.value.problems
    assert problem.file == str(missing) and problem.field == "(file)"
    assert "cannot be read" in problem.message


def test_good_base_reads():
    # the cases above are single edits of a file that is itself fine
    chain = chain_from_text(BASE)
    assert chain.stages[0].quantity("rf").value == 90e3


def test_unknown_part_and_bad_value_come_out_in_one_round(tmp_path):
    # the part check needs a loaded chain; a file that does not load still names its unknown
    # parts beside its other problems, in line order
    path = tmp_path / "chain.toml"
    path.write_text(
        BASE.replace("generic-bipolar-15v", "generic-bipolar-15").replace('rf = "90k"', 'rf = "9q"'),
        encoding="utf-8",
    )
    with pytest.raises(InputError) as caught:
        load_checked(str(path))
    located = [(p.line, p.field) for p in caught.value.problems]
    assert located == [(10, "stage.1.part"), (11, "stage.1.rf")]

"""The set text a:b,c:d is one grammar: the command line and the case file accept and refuse
the same texts, and read the same set from each (issue 11: the case file used to accept
-1:1e400 and 1_0 and refuse -1: and 0:, the command line the opposite)."""

from __future__ import annotations

import math

import pytest

from equilibrium.errors import InputError
from equilibrium.sets import IntervalSet
from workbench.case import parse_case
from workbench.cli import main

INF = math.inf

# text -> the set it means, or None for a refusal (with a word the one-line message must hold)
TABLE = [
    ("-1:1", ((-1.0, 1.0),)),
    ("0:", ((0.0, INF),)),                        # an empty end is infinite (README)
    ("-1:", ((-1.0, INF),)),                      # the same rule on the left of 0
    (":0", ((-INF, 0.0),)),
    (":", ((-INF, INF),)),
    ("-inf:inf", ((-INF, INF),)),
    ("-INF:+Infinity", ((-INF, INF),)),
    (" 0 : 1 , 2 : 3 ", ((0.0, 1.0), (2.0, 3.0))),
    ("2:3,0:1", ((0.0, 1.0), (2.0, 3.0))),         # a set: the order of the pieces is immaterial
    ("+.5:1.,1e1:2E1", ((0.5, 1.0), (10.0, 20.0))),
    ("-1:1e400", "not finite"),
    ("1e-400:1", "underflows"),
    ("1_0:20", "not a number"),
    ("0:1_0", "not a number"),
    ("０:1", "U+FF10"),                              # full-width digit zero
    ("0x1:2", "not a number"),
    ("nan:1", "not a number"),
    ("1:0", "reversed"),
    ("1:1", "single point"),
    ("0:1,0.5:2", "overlap"),
    ("0:1,1:2", "overlap"),
    ("0:inf,2:3", "overlap"),                     # an infinite end can only be an outer one
    ("0:1:2", "a:b"),
    ("0:1,", "a:b"),
    ("", "empty"),
    ("a:b", "not a number"),
]


def case_text(intervals: str) -> str:
    escaped = intervals.replace("\\", "\\\\").replace('"', '\\"')
    return f'[field]\nexpression = "x**2/2"\n[set]\nintervals = "{escaped}"\n'


@pytest.mark.parametrize("text,meaning", TABLE, ids=[repr(t) for t, _ in TABLE])
def test_case_file_and_command_line_read_the_same_set(text, meaning, capsys):
    # the case file
    try:
        case_set = parse_case(case_text(text)).set.intervals
        case_error = None
    except InputError as exc:
        case_set, case_error = None, str(exc)
    # the command line (in process: the same main as the console script)
    code = main(["equilibrium", "--potential", "x^2/2", f"--on={text}", "--json"])
    err = capsys.readouterr().err
    if meaning is None or isinstance(meaning, str):
        assert case_error is not None and meaning in case_error, case_error
        assert code == 2 and meaning in err and len(err.strip().splitlines()) == 1, err
        # the parser speaks of the set (about="set"); the command line adds its spelling, the
        # case file its line and no option name
        assert "--on=a:b,c:d" in err and "--on" not in case_error, (err, case_error)
        with pytest.raises(InputError, match=meaning.replace("+", r"\+")) as info:
            IntervalSet.parse(text)
        assert info.value.about == "set"
    else:
        assert case_error is None
        assert case_set == meaning
        assert code in (0, 3), err                    # accepted (3: solved but a figure failed)
        assert IntervalSet.parse(text).intervals == meaning


def test_list_form_reads_its_string_ends_with_the_same_end_parser():
    base = '[field]\nexpression = "x**2/2"\n[set]\nintervals = '
    assert parse_case(base + '[[-1, "inf"]]\n').set.intervals == ((-1.0, INF),)
    assert parse_case(base + '[["-inf", 0], [1, 2]]\n').set.intervals == ((-INF, 0.0), (1.0, 2.0))
    for bad, word in (('[[-1, "1e400"]]', "not finite"), ('[[-1, "1_0"]]', "not a number"),
                      ('[[-1, 1e400]]', "not finite"), ('[[2, 1]]', "reversed"), ('[[0, 1, 2]]', "pair"),
                      ('[[0, true]]', "not a number"), ('[[0, 1], [0.5, 2]]', "overlap")):
        with pytest.raises(InputError, match=word):
            parse_case(base + bad + "\n")


def test_out_of_range_float_literals_anywhere_in_a_case_file():
    """TOML reads 1e400 as inf and 1e-400 as 0 without a word; the case file refuses both."""
    text = '[field]\nexpression = "x**2/2 - t*x"\nparameters = { t = 1e400 }\n'
    with pytest.raises(InputError, match=r"line 3: number 1e400 is not finite"):
        parse_case(text)
    with pytest.raises(InputError, match=r"underflows"):
        parse_case(text.replace("1e400", "-2.5e-400"))
    assert parse_case(text.replace("1e400", "0.0e-400")).field.parameters["t"] == 0.0

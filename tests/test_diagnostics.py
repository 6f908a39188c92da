"""Diagnostics and limits: every bad input ends as FILE:LINE:COL diagnostics (GNU style), exit 2.

The message form follows the GNU Coding Standards, section 4.4 "Formatting
Error Messages" (``SOURCE-FILE-NAME:LINENO:COLUMN: MESSAGE``), from memory.
"""
from __future__ import annotations

import ast
import os
import re
from pathlib import Path

import pytest

from solver import api
from solver.circuit import elaborate as E
from solver.language import parse as P
from solver.cli.commands.common import write_file
from solver.diagnostics import Diagnostic, InputError, Loc

GOOD = "signal VS (in, gnd) 1 V, rs=50\nresistor R1 (in, out) 1k\nload RL (out, gnd) 1k\n"
GNU = re.compile(r"^(?P<file>[^:\n]+):(?P<line>\d+):(?P<col>\d+): (error|warning): .+$")


def diag_of(text: str, file: str = "t.pw") -> list[Diagnostic]:
    with pytest.raises(InputError) as e:
        api.solve(api.loads(text, file))
    return e.value.diagnostics


def test_format_has_source_line_and_caret_under_the_spot():
    d = Diagnostic("error", Loc("t.pw", 2, 6, 3), "bad")
    text = d.format({"t.pw": "x\n\tab cde\n"})
    assert text == "t.pw:2:6: error: bad\n \tab cde\n \t    ^~~"  # tab kept, caret under "d"


def test_syntax_errors_of_several_lines_in_one_run():
    ds = diag_of("resistor R1 (a b) 1k\nsignal VS (a, gnd) 1 V\nnpn Q1 (a, b, gnd) ic=\nload RL (a, gnd) 1k\n")
    assert [(d.loc.line, d.loc.col) for d in ds] == [(1, 16), (3, 23)]
    assert ds[0].message == "unexpected 'b'; expected ')', ','"  # no merged-state lookaheads


def test_expected_tokens_are_readable():
    (d,) = diag_of("signal VS (a, gnd) 1 V\nresistor R1 (a, gnd) 1k *\nload RL (a, gnd) 1k\n")
    assert d.message == "unexpected end of line; expected a value" and "add_op" not in d.message


@pytest.mark.parametrize("expr", ['__import__("os")', "exec(1)", "eval(R1)", "open(1)", "getattr(1)"])
def test_code_injection_in_an_expression_is_a_parse_error(expr):
    ds = diag_of(f"signal VS (a, gnd) 1 V\nresistor R1 (a, gnd) {expr}\nload RL (a, gnd) 1k\n")
    assert ds[0].severity == "error" and ds[0].loc.line == 2
    assert "unknown function" in ds[0].message or "unexpected" in ds[0].message


RISKY = {"eval", "exec", "compile", "sympify", "parse_expr"}


def risky_calls(src: str, name: str = "<sample>") -> list[str]:
    """Calls of eval/exec/compile/sympify/parse_expr (and ``__import__`` of a computed name) in
    ``src`` whose line carries no ``# trusted:`` note; ``re.compile`` is not one of them."""
    lines = src.splitlines()
    found = []
    for node in ast.walk(ast.parse(src)):
        if isinstance(node, ast.Call):
            f = node.func
            fname = f.id if isinstance(f, ast.Name) else f.attr if isinstance(f, ast.Attribute) else None
            dynamic_import = fname == "__import__" and not all(isinstance(a, ast.Constant) for a in node.args)
            re_compile = (isinstance(f, ast.Attribute) and fname == "compile" and isinstance(f.value, ast.Name)
                          and f.value.id == "re")
            if (fname in RISKY or dynamic_import) and not re_compile:
                if "# trusted:" not in lines[node.lineno - 1]:
                    found.append(f"{name}:{node.lineno}: {fname}")
    return found


def test_no_user_text_reaches_eval_exec_sympify_parse_expr():
    """Every call of eval/exec/compile/sympify/parse_expr in solver/ carries a `# trusted:` note."""
    root = Path(__file__).resolve().parent.parent / "solver"
    paths = sorted(root.rglob("*.py"))
    assert len(paths) > 20  # the walk really reads the package
    found = [hit for path in paths for hit in risky_calls(path.read_text(encoding="utf-8"), path.name)]
    assert found == []


def test_scanner_would_catch_an_eval():
    # the scan above must be able to fail: the same function, on a planted sample, flags every
    # risky call without a note and passes the noted one and re.compile
    sample = (
        "import re, sympy\n"
        "from sympy.parsing.sympy_parser import parse_expr\n"
        "x = eval(user_text)\n"
        "exec(code)\n"
        "y = sympy.sympify(text)\n"
        "z = parse_expr(text)\n"
        "m = __import__(name)\n"
        "c = compile(src, 'f', 'exec')\n"
        "ok = eval('1 + 1')  # trusted: a constant written here\n"
        "pat = re.compile('a+')\n"
        "os = __import__('os')\n"
    )
    assert risky_calls(sample, "planted.py") == [
        "planted.py:3: eval", "planted.py:4: exec", "planted.py:5: sympify", "planted.py:6: parse_expr",
        "planted.py:7: __import__", "planted.py:8: compile"]


def test_expression_depth_limit():
    deep = "+".join(["1"] * (P.MAX_EXPR_DEPTH + 5))
    (d,) = diag_of(f"let x = {deep}\n{GOOD}")
    assert "nested deeper than" in d.message and d.loc.line == 1


def test_deep_parentheses_and_minus_signs_do_not_crash():
    text = f"let x = {'(' * 3000}1{')' * 3000}\nlet y = {'- ' * 3000}1\n{GOOD}"
    c = api.loads(text)  # parentheses add no tree depth; minus signs fold into the literal
    got = [(d.severity, d.loc.line, d.loc.col, d.message) for d in c.warnings]
    assert got == [("warning", 1, 5, "'x' is defined but never used"),
                   ("warning", 2, 5, "'y' is defined but never used")]


def test_deep_right_nesting_is_an_error_not_a_crash():
    text = "let x = 2" + "^1" * 4000 + "\n" + GOOD
    (d,) = diag_of(text)
    assert "nested deeper" in d.message


def test_line_length_limit():
    ds = diag_of("let x = 1" + " " * P.MAX_LINE_CHARS + "\n" + GOOD)
    assert ds[0].loc.line == 1 and "longer than" in ds[0].message


def test_file_size_limit(monkeypatch):
    monkeypatch.setattr(P, "MAX_FILE_BYTES", 100)
    (d,) = diag_of(GOOD * 3)
    assert "larger than 100 bytes" in d.message


def test_element_count_limit(monkeypatch):
    monkeypatch.setattr(E, "MAX_ELEMENTS", 2)
    ds = diag_of(GOOD + "resistor R2 (out, gnd) 1k\n")
    assert "more than 2 elements" in ds[0].message and ds[0].loc.line == 3  # the third element


def test_block_recursion_and_nesting_limits(monkeypatch):
    ds = diag_of("block a (p, q)\n  use a X (p, q)\nend\nuse a Y (in, gnd)\n" + GOOD)
    assert any("uses itself" in d.message for d in ds)
    chain = "".join(f"block b{i} (p, q)\n  use b{i + 1} X (p, q)\nend\n" for i in range(40))
    chain += "block b40 (p, q)\n  resistor R (p, q) 1k\nend\nuse b0 Y (in, gnd)\n"
    ds = diag_of(chain + GOOD)
    assert any(f"nests deeper than {E.MAX_NESTING} levels" in d.message for d in ds)


def test_control_characters_are_reported():
    ds = diag_of("signal VS (a, gnd) 1 V\x00\n" + "load RL (a, gnd) 1k\n")
    assert ds[0].loc == Loc("t.pw", 1, 23, 1) and "U+0000" in ds[0].message


def test_too_many_errors_are_capped():
    ds = diag_of("".join("resistor R (a b) 1k\n" for _ in range(500)))
    # the first MAX_REPORTED errors at their lines, then one summary line for the rest
    assert len(ds) == P.MAX_REPORTED + 1
    assert [d.loc.line for d in ds[:-1]] == list(range(1, P.MAX_REPORTED + 1))
    assert ds[-1].message == f"{500 - P.MAX_REPORTED} more errors not shown" and ds[-1].loc is None


def test_invalid_utf8_and_empty_file(tmp_path, cli):
    bad = tmp_path / "bad.pw"
    bad.write_bytes(b"signal VS (a, gnd) 1 V\nresistor R1 (a, gnd) 4k\xff7\n")
    r = cli("solve", bad)
    assert r.returncode == 2 and r.stderr.startswith(f"{bad}:2:24: error: invalid UTF-8")
    for body in (b"", b"  \n\t\n# only a comment\n"[:4]):
        empty = tmp_path / "empty.pw"
        empty.write_bytes(body)
        r = cli("solve", empty)
        assert r.returncode == 2 and f"{empty}:1:1: error: the file is empty" in r.stderr
    r = cli("solve", tmp_path / "missing.pw")
    assert r.returncode == 2 and "cannot read" in r.stderr and "Traceback" not in r.stderr


def test_only_comments_is_a_clean_error(netlist, cli):
    r = cli("solve", netlist("# nothing but a comment\n"))
    assert r.returncode == 2 and "no signal" in r.stderr


def test_internal_error_traceback_only_with_debug(monkeypatch, capsys, netlist):
    from solver import cli as C
    p = netlist(GOOD)

    def boom(*a, **k):
        raise RuntimeError("planted")
    monkeypatch.setattr(api, "solve", boom)
    assert C.main(["solve", str(p)]) == 3
    assert "internal error: RuntimeError: planted" in capsys.readouterr().err
    with pytest.raises(RuntimeError):
        C.main(["solve", "--debug", str(p)])


# --- output files ---------------------------------------------------------------------------
def test_write_file_refuses_to_replace_without_force(tmp_path):
    p = tmp_path / "out.csv"
    p.write_text("user data")
    with pytest.raises(InputError) as e:
        write_file(p, "new")
    assert "--overwrite" in e.value.diagnostics[0].message and p.read_text() == "user data"
    write_file(p, "new", overwrite=True)
    assert p.read_text() == "new" and sorted(os.listdir(tmp_path)) == ["out.csv"]


def test_write_file_is_atomic(tmp_path, monkeypatch):
    p = tmp_path / "plot.png"
    p.write_bytes(b"old")

    def fail(src, dst):
        raise OSError("disk full")
    monkeypatch.setattr(os, "replace", fail)
    with pytest.raises(InputError) as e:  # a clean diagnostic, exit 2
        write_file(p, b"new", overwrite=True)
    assert "cannot write" in e.value.diagnostics[0].message and "disk full" in e.value.diagnostics[0].message
    assert p.read_bytes() == b"old" and sorted(os.listdir(tmp_path)) == ["plot.png"]  # no temp left


def test_write_file_missing_folder(tmp_path):
    with pytest.raises(InputError) as e:
        write_file(tmp_path / "no" / "such.s2p", "x")
    assert "does not exist" in e.value.diagnostics[0].message


def test_endless_input_is_cut_at_the_size_limit(monkeypatch):
    # /dev/zero never ends: reading stops after the limit instead of exhausting memory
    monkeypatch.setattr(P, "MAX_FILE_BYTES", 1000)
    with pytest.raises(InputError) as e:
        api.read_source("/dev/zero")
    assert "larger than 1000 bytes" in e.value.diagnostics[0].message


def test_windows_line_endings_and_tabs(netlist):
    p = netlist("signal\tVS (in, gnd) 1 V, rs=50\r\nresistor R1 (in, out) 1k\r\nload RL (out, gnd)\t1k\r\n")
    r = api.solve(api.load(p))
    assert abs(r.quantities["Gv"] - 1e3 / 2050) < 1e-12  # voltage divider 1k/(50 + 1k + 1k) (Ohm's law; no source)


def test_directory_is_not_a_netlist(tmp_path, cli):
    r = cli("solve", tmp_path)
    assert r.returncode == 2 and "cannot read" in r.stderr and "Traceback" not in r.stderr


def test_write_file_refuses_a_folder(tmp_path):
    with pytest.raises(InputError) as e:
        write_file(tmp_path, "x", overwrite=True)
    assert "is a folder" in e.value.diagnostics[0].message


def test_deep_nesting_is_left_to_lark_without_a_crash():
    # the fast path recurses per level: a 4000-deep line is declined and lark's iterative parser reads it
    for value in ["(" * 4000 + "1" + ")" * 4000, "-" * 4000 + "1", "2^" * 3000 + "2"]:
        text = "let x = " + value + "\n" + GOOD
        with pytest.raises(P._Decline):
            P._Fast("t.pw").statement(text.split("\n")[0], 1)
        try:
            got = api.loads(text)
        except InputError as e:  # the depth limit (2^2^...): a clean diagnostic, as from lark alone
            with pytest.raises(InputError) as ref:
                P._parse(text, "<string>", fast=False)
            assert str(e) == str(ref.value)
        else:
            assert got is not None and "2^" not in value


def test_unused_let_and_block_warnings():
    c = api.loads("block spare (p, q)\n  resistor R (p, q) 1k\nend\n"
                  "block amp (i, o)\n  let unused = 3\n  let used = 1k\n  resistor R (i, o) used\nend\n"
                  "let free = 5\nsignal VS (a, gnd) 1 V\nuse amp X1 (a, b)\nuse amp X2 (b, gnd)\nload RL (b, gnd) -1k\n")
    got = sorted((d.loc.line, d.message) for d in c.warnings)
    assert got == [(1, "block 'spare' is never used"),
                   (5, "'unused' in block 'amp' is defined but never used"),
                   (9, "'free' is defined but never used"),
                   (13, "negative load value (-1000)")]

"""The solve path of a small circuit stays off scipy.sparse; the dense and sparse solves agree.

Not timed (speed figures live in tests/bench/bench_cli.py): these check *what* is imported
and that the dense path gives the same answers as the sparse one.
"""
import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

from solver.circuit.elements import Capacitor, CurrentSource, Resistor
from solver.engine import mna

ROOT = Path(__file__).resolve().parents[1]


def _run(code: str) -> subprocess.CompletedProcess:
    env = dict(os.environ, PYTHONPATH=str(ROOT) + os.pathsep + os.environ.get("PYTHONPATH", ""))
    return subprocess.run([sys.executable, "-c", code], cwd=ROOT, env=env, capture_output=True,
                          text=True, timeout=120)


def test_small_solve_through_the_api_does_not_import_scipy_sparse():
    code = r"""
import sys
import solver
c = solver.loads('''
signal VS (in, gnd) 1 V, rs=50
resistor R1 (in, out) 1k
load RL (out, gnd) 1k
''')
r = solver.solve(c)
print(repr(r.quantities["Gv"].real))
assert 'scipy.sparse' not in sys.modules, sorted(m for m in sys.modules if m.startswith('scipy'))
assert 'scipy.sparse.linalg' not in sys.modules
"""
    p = _run(code)
    assert p.returncode == 0, p.stderr
    # voltage divider: Gv = RL / (rs + R1 + RL) (Ohm's law, textbook closed form, from memory)
    assert float(p.stdout) == pytest.approx(1e3 / (50 + 1e3 + 1e3), rel=1e-12)


def test_cli_solve_of_a_bundled_example_does_not_import_scipy_sparse():
    # the command a user types, run in-process so sys.modules can be read afterwards
    code = r"""
import contextlib, io, runpy, sys
sys.argv = ['solver', 'solve', 'circuits/mic_preamp.pw']
out = io.StringIO()
with contextlib.redirect_stdout(out):
    try:
        runpy.run_module('solver', run_name='__main__')
    except SystemExit as e:
        assert e.code in (0, None), e.code
assert 'port quantities' in out.getvalue()
assert 'scipy.sparse' not in sys.modules, sorted(m for m in sys.modules if m.startswith('scipy'))
"""
    p = _run(code)
    assert p.returncode == 0, p.stderr


def _random_rc(rng, n):
    """A random connected RC network on nodes n0..n{n-1} (every node also to ground), a current
    source into n0, and its nodal admittance matrix G + sC written out here by hand."""
    els, G, C = [], np.zeros((n, n)), np.zeros((n, n))

    def two(M, i, j, y):  # the two-terminal stamp of nodal analysis (textbook, from memory)
        M[i, i] += y
        if j is not None:
            M[j, j] += y
            M[i, j] -= y
            M[j, i] -= y

    for i in range(n):
        r = 10.0 ** rng.uniform(1, 6)
        els.append(Resistor(f"RG{i}", (f"n{i}", "0"), r))
        two(G, i, None, 1 / r)
    for k in range(3 * n):
        i, j = rng.choice(n, 2, replace=False)
        r = 10.0 ** rng.uniform(1, 6)
        els.append(Resistor(f"R{k}", (f"n{i}", f"n{j}"), r))
        two(G, i, j, 1 / r)
        if k % 2:
            cap = 10.0 ** rng.uniform(-12, -6)
            els.append(Capacitor(f"C{k}", (f"n{j}", f"n{i}"), cap))
            two(C, i, j, cap)
    els.append(CurrentSource("I1", ("0", "n0"), 1e-3))
    b = np.zeros(n)
    b[0] = 1e-3
    return els, G, C, b


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_dense_and_sparse_solves_agree_with_numpy(seed, monkeypatch):
    rng = np.random.default_rng(seed)
    n = 40
    els, G, C, b = _random_rc(rng, n)
    sys_ = mna.assemble(els, {"0"})
    assert sys_.stamper.size == n
    order = [sys_.stamper.nodes[f"n{i}"] for i in range(n)]  # the stamper's numbering
    for s in (0.0, 2j * np.pi * 1e3, 2j * np.pi * 1e6):
        expected = np.linalg.solve(G + s * C, b)
        dense = sys_.solve(s)
        monkeypatch.setattr(mna, "SOLVE_DENSE_LIMIT", 0)  # force the sparse LU
        sparse = sys_.solve(s)
        monkeypatch.setattr(mna, "SOLVE_DENSE_LIMIT", 10 ** 9)
        for x in (dense, sparse):
            assert np.allclose(x[order], expected, rtol=1e-9, atol=0)
        assert np.allclose(dense, sparse, rtol=1e-9, atol=0)
    # the lazily built sparse G, C hold the same matrix as the one written here
    assert np.allclose(sys_.G.toarray()[np.ix_(order, order)], G, rtol=1e-14, atol=0)
    assert np.allclose(sys_.C.toarray()[np.ix_(order, order)], C, rtol=1e-14, atol=0)
    assert np.array_equal(sys_.dense("G"), sys_.G.toarray())
    assert sys_.reactive


def test_both_paths_reject_a_singular_system(monkeypatch):
    # node b floats (only one resistor to a, nothing else): the matrix is singular
    els = [Resistor("R1", ("a", "b"), 1e3), CurrentSource("I1", ("0", "a"), 1e-3)]
    for limit in (10 ** 9, 0):
        monkeypatch.setattr(mna, "SOLVE_DENSE_LIMIT", limit)
        with pytest.raises(mna.SingularSystem):
            mna.assemble(els, {"0"}).solve(0)
    # numerically singular: two resistors that cancel exactly are node a's only connection
    els = [Resistor("R1", ("a", "0"), 1e3), Resistor("R2", ("a", "0"), -1e3), Resistor("R4", ("b", "0"), 1e3),
           CurrentSource("I1", ("0", "b"), 1e-3)]
    for limit in (10 ** 9, 0):
        monkeypatch.setattr(mna, "SOLVE_DENSE_LIMIT", limit)
        with pytest.raises(mna.SingularSystem):
            mna.assemble(els, {"0"}).solve(0)


@pytest.mark.parametrize("seed", [4, 5])
def test_condition_estimate_dense_route_equals_the_sparse_route(seed, monkeypatch):
    rng = np.random.default_rng(seed)
    els, _, _, _ = _random_rc(rng, 30)
    sys_ = mna.assemble(els, {"0"})
    for s in (0.0, 2j * np.pi * 1e5):
        dense = mna.condition_estimate(sys_, s)
        monkeypatch.setattr(mna, "DENSE_COND_TRUST", -1.0)  # never trust the dense result
        sparse = mna.condition_estimate(sys_, s)
        monkeypatch.undo()
        # exact 1-norm condition number of the same equilibrated matrix both ways (numpy.linalg.cond)
        assert dense == pytest.approx(sparse, rel=1e-12)  # equal up to rounding of the scaling
        assert 1.0 <= dense < mna.DENSE_COND_TRUST


def test_cli_derive_imports_neither_sympy_nor_scipy():
    # derive writes its forms straight from the polynomials (issue 12, item 5); its LaTeX
    # (only with --latex) comes from the same expression nodes, so neither needs sympy
    code = r"""
import contextlib, io, json, runpy, sys
sys.argv = ['solver', 'derive', 'circuits/mic_preamp.pw', 'all', '--json', '--latex']
out = io.StringIO()
with contextlib.redirect_stdout(out):
    try:
        runpy.run_module('solver', run_name='__main__')
    except SystemExit as e:
        assert e.code in (0, None), e.code
d = json.loads(out.getvalue())
assert len(d['quantities']) == 7 and all('latex' in q for q in d['quantities'])
assert 'sympy' not in sys.modules, 'sympy imported'
assert not any(m.startswith('scipy') for m in sys.modules), sorted(m for m in sys.modules if m.startswith('scipy'))
"""
    p = _run(code)
    assert p.returncode == 0, p.stderr

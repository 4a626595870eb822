"""The README's Python snippet ("The same from Python") runs as written.

The ```python blocks of README.md are executed in a fresh namespace from the repository
root, where the snippet's relative machine path points. The whole snippet runs a full
evaluation of the demo (tens of seconds on two cores), so it is marked slow; the fast test
runs every statement that does not depend on ``evaluate(...)`` and checks that the
``evaluate`` call the README shows fits the function's signature.
"""

from __future__ import annotations

import ast
import inspect
import math
import re

import pytest
from paths import REPO_ROOT

import fluxlab
from fluxlab.spec.types import MachineSpec

README = REPO_ROOT / "README.md"
#: The key the snippet changes and the value it sets (README.md, "The same from Python").
END1_PATH, END1_DEG = "rotor.barriers[1].end_angle_deg", 22.0


def python_blocks(markdown: str) -> list[str]:
    """The bodies of the ```python fenced blocks of a Markdown text, in order."""
    return re.findall(r"^```python[ \t]*\n(.*?)^```", markdown, flags=re.MULTILINE | re.DOTALL)


def _is_evaluate_call(node: ast.AST) -> bool:
    """Whether a node is a call of ``evaluate`` (as ``fluxlab.studies.evaluate`` or a bare name)."""
    if not isinstance(node, ast.Call):
        return False
    func = node.func
    return (func.attr if isinstance(func, ast.Attribute) else getattr(func, "id", None)
            ) == "evaluate"


def _calls_evaluate(node: ast.AST) -> bool:
    """Whether a statement calls ``evaluate`` anywhere."""
    return any(_is_evaluate_call(n) for n in ast.walk(node))


def split_off_evaluation(code: str) -> tuple[list[ast.stmt], list[ast.stmt]]:
    """(kept, dropped) top-level statements: dropped are those calling ``evaluate`` and
    those reading a name that a dropped statement bound (their results)."""
    tainted: set[str] = set()
    kept, dropped = [], []
    for stmt in ast.parse(code).body:
        loads = {n.id for n in ast.walk(stmt) if isinstance(n, ast.Name)
                 and isinstance(n.ctx, ast.Load)}
        if _calls_evaluate(stmt) or loads & tainted:
            tainted |= {n.id for n in ast.walk(stmt) if isinstance(n, ast.Name)
                        and isinstance(n.ctx, ast.Store)}
            dropped.append(stmt)
        else:
            kept.append(stmt)
    return kept, dropped


def _snippet() -> str:
    blocks = python_blocks(README.read_text(encoding="utf-8"))
    assert blocks, "README.md has no ```python block"
    return "\n".join(blocks)


def _check_replaced_copy(namespace: dict) -> None:
    # README: replace_path gives "a re-validated copy"; the original keeps its value. SI
    # units inside (README, Conventions): the spec holds the angle in radians.
    spec, other = namespace["spec"], namespace["other"]
    assert isinstance(other, MachineSpec) and other is not spec
    assert other.rotor.barriers[1].end_angle == pytest.approx(math.radians(END1_DEG))
    assert other.raw["rotor"]["barriers"][1]["end_angle_deg"] == END1_DEG
    assert spec.raw["rotor"]["barriers"][1]["end_angle_deg"] != END1_DEG


# ------------------------------------------------------------------ the extraction itself
def test_python_blocks_takes_only_python_fences():
    text = "a\n```sh\nmake demo\n```\n```python\nx = 1\n```\ntext\n```python\ny = 2\n```\n"
    assert python_blocks(text) == ["x = 1\n", "y = 2\n"]


def test_split_off_evaluation_drops_the_call_and_what_uses_its_result():
    code = ("import fluxlab\nspec = fluxlab.load_machine('m.toml')\n"
            "result = fluxlab.studies.evaluate(spec)\nprint(result.summary)\n"
            "other = fluxlab.replace_path(spec, 'a', 1)\n")
    kept, dropped = split_off_evaluation(code)
    assert [ast.unparse(s) for s in dropped] == ["result = fluxlab.studies.evaluate(spec)",
                                                 "print(result.summary)"]
    assert len(kept) == 3


# ------------------------------------------------------------------ the README
def test_readme_snippet_without_the_evaluation_runs(monkeypatch):
    monkeypatch.chdir(REPO_ROOT)
    kept, dropped = split_off_evaluation(_snippet())
    # the snippet shows an evaluation (else this split is pointless) and more than that
    assert any(_calls_evaluate(s) for s in dropped) and kept
    namespace: dict = {"__name__": "readme_snippet"}
    exec(compile(ast.Module(body=kept, type_ignores=[]), str(README), "exec"), namespace)
    _check_replaced_copy(namespace)
    # each evaluate call as written binds to the real function (its arguments exist)
    def value(node):
        return eval(compile(ast.Expression(node), str(README), "eval"), namespace)

    calls = [n for s in dropped for n in ast.walk(s) if _is_evaluate_call(n)]
    for call in calls:
        assert value(call.func) is fluxlab.evaluate
        args = [value(a) for a in call.args]
        kwargs = {k.arg: value(k.value) for k in call.keywords}
        inspect.signature(fluxlab.evaluate).bind(*args, **kwargs)  # TypeError if not


@pytest.mark.slow  # a full evaluation of the demo: tens of seconds on two cores
def test_readme_snippet_runs_and_prints_the_saliency(monkeypatch, capsys):
    monkeypatch.chdir(REPO_ROOT)
    namespace: dict = {"__name__": "readme_snippet"}
    exec(compile(_snippet(), str(README), "exec"), namespace)
    printed = capsys.readouterr().out.split()
    assert len(printed) == 1, printed
    saliency = float(printed[0])
    assert saliency == namespace["result"].summary["saliency_apparent"]
    # README, Conventions: "on the demo the saliency is about 6.3 at the rated point"
    # ("about": 5 % here, common practice, no source), and saliency = Ld / Lq > 1
    assert saliency == pytest.approx(6.3, rel=0.05)
    _check_replaced_copy(namespace)

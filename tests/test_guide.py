"""The user guide cannot rot: every ```python block of docs/guide.md runs, and prints what the guide shows.

Blocks run in order in one namespace (later examples use names defined earlier), in a temporary working
folder. Each python block is followed in the guide by a ```text block with its printed output; the test
compares the two line by line (trailing spaces ignored). The numbers in the guide are therefore the
current outputs of the code; their correctness is checked against outside references by the stage tests
and, where the guide prints a closed form beside a computed value, by the equality visible in the guide
(also asserted below).
"""

from __future__ import annotations

import contextlib
import io
import re
from pathlib import Path

import numpy as np
import pytest

GUIDE = Path(__file__).resolve().parents[1] / "docs" / "guide.md"
PAIR = re.compile(r"```python\n(.*?)```\n\s*prints\s*\n\s*```text\n(.*?)```\n", re.S)


def _blocks() -> list[tuple[str, str]]:
    text = GUIDE.read_text(encoding="utf-8")
    pairs = PAIR.findall(text)
    # Every python block must have its printed output shown (no block escapes the check).
    assert len(pairs) == text.count("```python"), "a ```python block without a following ```text output block"
    return pairs


def test_guide_has_one_section_per_stage() -> None:
    # Checks that the guide covers each stage merged so far with an example.
    text = GUIDE.read_text(encoding="utf-8")
    stages = (
        "objects",
        "disk",
        "synthetic",
        "snapshots",
        "stats",
        "closure",
        "measure",
        "vertical",
        "flux",
        "population",
    )
    for module in stages:
        assert f"fluxfunnel.{module}" in text, module
    assert len(_blocks()) >= 8


def test_guide_examples_run_and_print_what_is_shown(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.chdir(tmp_path)
    namespace: dict[str, object] = {"__name__": "__guide__"}
    outputs = []
    for i, (code, shown) in enumerate(_blocks()):
        buf = io.StringIO()
        with contextlib.redirect_stdout(buf):
            exec(compile(code, f"docs/guide.md block {i + 1}", "exec"), namespace)  # noqa: S102 - our own docs
        got = [line.rstrip() for line in buf.getvalue().splitlines()]
        want = [line.rstrip() for line in shown.splitlines()]
        assert got == want, f"block {i + 1} prints\n" + "\n".join(got) + "\nbut the guide shows\n" + "\n".join(want)
        outputs.append(buf.getvalue())
    # Values the guide prints beside an outside reference (these hold independently of the shown text):
    ns = namespace
    # Source: Bardeen, Press & Teukolsky 1972 (Schwarzschild ISCO = 6 GM/c^2).
    assert "6.000 GM/c^2" in outputs[0]
    # Source: Roberts-flow SOCA closed form, docs/measure.md section 3.1.
    tf, u0, lam = ns["tf"], ns["u0"], ns["lam"]
    assert np.allclose(tf.alpha[:, 0, 0], -(u0**2) * np.sqrt(2.0) / (2 * lam), rtol=1e-10)  # type: ignore[attr-defined,operator]
    # Source: Lubow, Papaloizou & Pringle 1994 (uniform eta: tan i = |v_r| h / eta).
    res, v_r, big_h, nu = ns["res"], ns["v_r"], ns["H"], ns["nu"]
    assert res.surface_inclination_deg == pytest.approx(np.degrees(np.arctan(abs(v_r) * big_h / nu)), rel=1e-8)  # type: ignore[attr-defined,operator]
    # Source: Hankel-transform closed form f(n) = G((n+1)/2) G(1-n/2) / [G((3-n)/2) G(n/2)] (docs/theory.md,
    # "Global flux"), evaluated independently with scipy.special.gamma.
    from scipy.special import gamma

    n = 1.25
    f_ref = gamma((n + 1) / 2) * gamma(1 - n / 2) / (gamma((3 - n) / 2) * gamma(n / 2))
    assert f"closed form): {f_ref:.4f}" in outputs[6]
    # Derived: docs/theory.md, "Global flux": the steady flux speed vanishes, so tan i = |u_adv| / u_dif.
    steady, speeds = ns["steady"], ns["speeds"]
    assert np.allclose(steady.tan_inclination[0, 5:-5], np.abs(speeds.u_adv[5:-5]) / speeds.u_dif[5:-5], rtol=1e-6)  # type: ignore[attr-defined,operator]

"""Helpers shared by the tests (fixtures live in conftest.py)."""

from __future__ import annotations

from typer.testing import CliRunner

from soacheck.cli import app

runner = CliRunner(env={"COLUMNS": "200", "SOACHECK_LIBRARY": ""})


def invoke(*args, env=None):
    """Run ``soacheck ARGS`` in-process with a fixed terminal width and no user library."""
    return runner.invoke(app, [str(a) for a in args], env=env)


def validate_output(command: str, text: str) -> dict:
    """Parse the ``--json`` output of ``soacheck COMMAND`` and validate it against its installed schema.

    Raises AssertionError naming the command, the path inside the object and what is wrong:
    a field the schema lacks, a missing field, a wrong type, a limit name outside the vocabulary.
    """
    import json

    import jsonschema

    from soacheck.jsonschemas import shipped

    try:
        payload = json.loads(text)
    except json.JSONDecodeError as err:
        raise AssertionError(f"soacheck {command} --json printed something that is not JSON ({err}):\n{text}") from None
    validator = jsonschema.Draft202012Validator(shipped(command))
    errors = sorted(validator.iter_errors(payload), key=lambda e: list(e.absolute_path))
    if errors:
        lines = [f"  at /{'/'.join(map(str, e.absolute_path))}: {e.message}" for e in errors[:10]]
        raise AssertionError(
            f"soacheck {command} --json does not follow its schema (soacheck/jsonschemas.py; after a change run "
            "python tools/write_schemas.py):\n" + "\n".join(lines)
        )
    return payload


def check_json_output(args, result) -> None:
    """Validate a CliRunner result's stdout when the command ran with ``--json`` and answered (exit 0 or 1)."""
    import shlex

    words = shlex.split(args) if isinstance(args, str) else [str(a) for a in (args or [])]
    if "--json" in words and result.exit_code in (0, 1) and words[0] not in ("-h", "--help"):
        validate_output(words[0], result.stdout)


# --------------------------------------------------------------------------- closed forms, written here
# Independent of soacheck's thermal code, so a test can hold the code to them.

FOUR_R_K_PER_W = (0.05, 0.15, 0.30, 0.50)  # the constructed four-term network of conftest.FOUR
FOUR_TAU_S = (1e-4, 1e-3, 1e-2, 1e-1)


def zth_closed_form(t_s, r=FOUR_R_K_PER_W, tau=FOUR_TAU_S):
    """Single-pulse Foster impedance Zth(t) = Σ Rᵢ (1 − e^(−t/τᵢ)) [K/W] (the Foster form; elementary)."""
    import numpy as np

    t = np.asarray(t_s, dtype=float)[..., None]
    return np.sum(np.asarray(r) * -np.expm1(-t / np.asarray(tau)), axis=-1)


def zth_train_closed_form(tp_s, duty, r=FOUR_R_K_PER_W, tau=FOUR_TAU_S):
    """Periodic steady-state peak of a Foster network under pulses tp every T = tp/D [K/W].

    Zth(tp, D) = Σ Rᵢ (1 − e^(−tp/τᵢ)) / (1 − e^(−T/τᵢ)): each branch's step response summed as a
    geometric series over the earlier pulses (elementary derivation). D = 0 is a single pulse.
    """
    import numpy as np

    if duty == 0:
        return float(zth_closed_form(tp_s, r, tau))
    r, tau = np.asarray(r), np.asarray(tau)
    return float(np.sum(r * -np.expm1(-tp_s / tau) / -np.expm1(-(tp_s / duty) / tau)))


def zth_train_start_closed_form(tp_s, duty, r=FOUR_R_K_PER_W, tau=FOUR_TAU_S):
    """Periodic steady state at the start of a pulse (the train's minimum) [K/W].

    Z_start(tp, D) = Σ Rᵢ (1 − e^(−tp/τᵢ)) e^(−(T − tp)/τᵢ) / (1 − e^(−T/τᵢ)), T = tp/D: the peak
    decayed over the pause (elementary derivation).
    """
    import numpy as np

    r, tau, period = np.asarray(r), np.asarray(tau), tp_s / duty
    return float(np.sum(r * -np.expm1(-tp_s / tau) * np.exp(-(period - tp_s) / tau) / -np.expm1(-period / tau)))


PULSE_TRAIN_DT_S, PULSE_TRAIN_TP_S = 1e-5, 3e-4


def pulse_train_above_dc(pulses=5, period_s=5e-3, dt_s=PULSE_TRAIN_DT_S, tp_s=PULSE_TRAIN_TP_S):
    """Pulses above DC that pass their pulse curve, and each pulse's margin against that curve in closed form.

    Pulses of 2 A at 80 V (160 W) for tp = 0.3 ms every 5 ms, nothing between them, on the
    constructed reference part (conftest) with its four-term Foster network, case held at
    25 °C. At 80 V the DC boundary allows 3.125 (40/80)² = 0.78125 A (slope −2 line), so each
    pulse lies far above DC (DC margin 1 − 2/0.78125 = −156 %). A 0.3 ms excursion is judged
    against the 1 ms curve, whose line from (40 V, 10 A) to (100 V, 2 A) allows
    I₁ = 10 (80/40)^m, m = ln(0.2)/ln(2.5), derated like the thermal limit (no table) at the
    junction temperature Tⱼ where the pulse starts: f = (150 − Tⱼ)/(150 − 25). With power held
    over each 0.3 ms and the branches (Rᵢ, τᵢ) decaying in between, pulse n starts at
    Tⱼ,ₙ = 25 + 160 Σ_{k<n} Σᵢ Rᵢ (1 − e^(−tp/τᵢ)) e^(−(tₙ − t_k − tp)/τᵢ)
    (superposition of first-order step responses, elementary). Each pulse's margin is then
    1 − 2/(I₁ fₙ), constant over the pulse.

    Returns
    -------
    (t_s, v_v, i_a, starts_s, margins)
        The samples, each ``(m,)``; each pulse's start time [s] and margin (fraction), ``(pulses,)``.
    """
    import math

    import numpy as np

    n_pulse, n_period = round(tp_s / dt_s), round(period_s / dt_s)
    k = np.arange(pulses * n_period)
    t = k * dt_s
    on = (k % n_period) < n_pulse
    v, i = np.full(t.size, 80.0), np.where(on, 2.0, 0.0)
    r_k_per_w, tau_s = np.array(FOUR_R_K_PER_W), np.array(FOUR_TAU_S)
    starts_s = np.arange(pulses) * n_period * dt_s
    i_1ms_a = 10 * 2 ** (math.log(0.2) / math.log(2.5))  # 2.958 A at 80 V, junction at 25 °C
    margins = []
    for n, t_n in enumerate(starts_s):
        decay = np.exp(-(t_n - starts_s[:n, None] - tp_s) / tau_s)  # (earlier pulses, branches)
        tj_c = 25 + 160 * float(np.sum(r_k_per_w * -np.expm1(-tp_s / tau_s) * decay))
        margins.append(1 - 2 / (i_1ms_a * (150 - tj_c) / 125))
    return t, v, i, starts_s, np.array(margins)


def svg_texts(path) -> list[str]:
    """The texts a matplotlib SVG shows (titles, labels, legend entries, ticks), read back from the file.

    matplotlib draws text as paths and writes each text beside them as an XML comment.
    """
    import re
    from pathlib import Path

    return re.findall(r"<!-- (.*?) -->", Path(path).read_text(encoding="utf-8"))


def exit_code_for(payload: dict) -> int:
    """The exit code a --json answer must come with: 1 when its verdict (or the best candidate's) fails, else 0.

    The rule of every checking command (README, "Exit codes"): 0 all safe, 1 something unsafe.
    """
    if "verdict" in payload:
        return 0 if payload["verdict"] == "pass" else 1
    if payload.get("candidates"):
        return 0 if payload["candidates"][0]["verdict"] == "pass" else 1
    return 0


# --------------------------------------------------------------------------- HTML read back


class HtmlNode:
    """An element of a parsed HTML page: tag, attributes, children (nodes and text), in document order."""

    def __init__(self, tag: str, attrs: dict[str, str | None]):
        self.tag = tag
        self.attrs = attrs
        self.children: list[HtmlNode | str] = []

    @property
    def classes(self) -> set[str]:
        return set((self.attrs.get("class") or "").split())

    def text(self) -> str:
        """All text inside, entities decoded, as a browser shows it in the DOM."""
        return "".join(c if isinstance(c, str) else c.text() for c in self.children)

    def iter(self, tag: str | None = None):
        """This node and every node below it (of ``tag`` when given), in document order."""
        if tag is None or self.tag == tag:
            yield self
        for child in self.children:
            if isinstance(child, HtmlNode):
                yield from child.iter(tag)

    def elements(self) -> list[HtmlNode]:
        """The child elements, without the text between them."""
        return [c for c in self.children if isinstance(c, HtmlNode)]


_VOID = frozenset({"area", "base", "br", "col", "embed", "hr", "img", "input", "link", "meta", "source", "wbr"})


def parse_html(text: str) -> HtmlNode:
    """Parse a page with the standard library's tokenizer into a tree of :class:`HtmlNode` (the root is ``#root``).

    Void elements (``meta``, ``img`` ...) and ``<x/>`` close themselves; an end tag closes
    the nearest open element of its name, as a browser's parser does for well-nested pages.
    """
    from html.parser import HTMLParser

    root = HtmlNode("#root", {})
    stack = [root]

    class Builder(HTMLParser):
        def handle_starttag(self, tag, attrs):
            node = HtmlNode(tag, dict(attrs))
            stack[-1].children.append(node)
            if tag not in _VOID:
                stack.append(node)

        def handle_startendtag(self, tag, attrs):
            stack[-1].children.append(HtmlNode(tag, dict(attrs)))

        def handle_endtag(self, tag):
            for depth in range(len(stack) - 1, 0, -1):
                if stack[depth].tag == tag:
                    del stack[depth:]
                    return

        def handle_data(self, data):
            stack[-1].children.append(data)

    parser = Builder(convert_charrefs=True)
    parser.feed(text)
    parser.close()
    return root


def violation_marks(ax) -> list[tuple[float, float]]:
    """The (x, y) of every first-violation mark a plot drew on ``ax`` (gid plotstyle.VIOLATION_GID)."""
    from soacheck.plotstyle import VIOLATION_GID

    return [
        (float(line.get_xdata()[0]), float(line.get_ydata()[0])) for line in ax.lines if line.get_gid() == VIOLATION_GID
    ]


def only_job_why(report_folder) -> str:
    """The text of the one job's ``<p class="why">`` (its headline) in a report of one job."""
    from pathlib import Path

    page = parse_html((Path(report_folder) / "report.html").read_text(encoding="utf-8"))
    (section,) = [node for node in page.iter("section") if "job" in node.classes]
    (why,) = [p for p in section.iter("p") if "why" in p.classes]
    return why.text()


def trace_rows(n: int = 997) -> list[str]:
    """``n`` CSV data lines ``time,voltage,current`` with rising times and random values (seeded)."""
    import numpy as np

    rng = np.random.default_rng(3)
    t = np.cumsum(rng.uniform(1e-6, 2e-5, n))
    v, i = rng.uniform(0, 50, n), rng.uniform(0, 5, n)
    return [f"{a:.9g},{b:.6g},{c:.7g}" for a, b, c in zip(t, v, i, strict=True)]


def written(folder, name: str, text: str, *, newline: str = "\n", encoding: str = "utf-8"):
    """``text`` written to ``folder/name`` as is (``newline=""`` keeps its line ends); the path."""
    path = folder / name
    with open(path, "w", newline=newline, encoding=encoding) as handle:
        handle.write(text)
    return path

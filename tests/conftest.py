"""Shared fixtures: user part folders written the way a user would write them."""

from __future__ import annotations

import errno
import os
import tempfile
from pathlib import Path

import pytest
from typer.testing import CliRunner

from soacheck.library import bundled_library, list_parts
from soacheck.partfiles import read_part
from soacheck.thermal import Foster

from .helpers import check_json_output, invoke


@pytest.fixture(autouse=True, scope="session")
def _json_outputs_follow_their_schemas():
    """Every ``--json`` output any test produces through a CliRunner is validated against its schema."""
    original = CliRunner.invoke

    def invoke(self, cli, args=None, *more, **kwargs):
        result = original(self, cli, args, *more, **kwargs)
        check_json_output(args, result)
        return result

    with pytest.MonkeyPatch.context() as patch:
        patch.setattr(CliRunner, "invoke", invoke)
        yield


# A constructed DC curve (invented numbers): current limit 15 A to 8.3333 V,
# constant power 125 W to 40 V, a second-breakdown line of slope -2 to 100 V.
# tj_max 150 °C and rth_jc 1.0 K/W make p_max = (150 - 25)/1.0 = 125 W consistent.
REFERENCE_SOA = """pulse,voltage,current
1ms,1,40
1ms,10,40
1ms,40,10
1ms,100,2
dc,1,15
dc,8.3333,15
dc,40,3.125
dc,100,0.5
"""

REFERENCE_TOML = """id = "{id}"
kind = "{kind}"
description = "constructed test part"
source = "constructed example, invented numbers"
{extra_top}
[ratings]
v_max = 100
i_max = 15
i_pulse_max = 40
p_max = 125
tj_max = 150
rth_jc = 1.0
{extra}
"""


def write_part(
    folder: Path, *, soa: str = REFERENCE_SOA, kind: str = "npn", extra: str = "", toml: str | None = None
) -> Path:
    """Write a part folder named after ``folder`` and return it."""
    folder.mkdir(parents=True, exist_ok=True)
    text = toml if toml is not None else REFERENCE_TOML.format(id=folder.name, kind=kind, extra=extra, extra_top="")
    (folder / "part.toml").write_text(text, encoding="utf-8")
    (folder / "soa.csv").write_text(soa, encoding="utf-8")
    return folder


# constructed: a four-term network whose sum, 1.0 K/W, equals the reference part's rth_jc
FOUR = Foster([0.05, 0.15, 0.30, 0.50], [1e-4, 1e-3, 1e-2, 1e-1])
THERMAL = "[thermal]\nfoster_r = [0.05, 0.15, 0.30, 0.50]\nfoster_tau = [1e-4, 1e-3, 1e-2, 1e-1]\n"


@pytest.fixture
def modelled_part(tmp_path):
    """The reference part with the four-term thermal model."""
    return read_part(write_part(tmp_path / "modelled", extra=THERMAL))


@pytest.fixture
def reference_part(tmp_path):
    """The constructed reference part, with no second-breakdown derating table."""
    return read_part(write_part(tmp_path / "ref-bjt"))


@pytest.fixture
def reference_part_with_table(tmp_path):
    """The reference part whose second breakdown derates to 0.9 at 75 °C (less than thermal's 0.6)."""
    extra = "[derating]\nsecond_breakdown = [[25, 1.0], [75, 0.9], [150, 0.8]]\n"
    return read_part(write_part(tmp_path / "ref-bjt-table", extra=extra))


BUNDLED_IDS = [entry.id for entry in list_parts([bundled_library()])]


@pytest.fixture(params=BUNDLED_IDS)
def bundled_part(request):
    """Each bundled demo part in turn."""
    return read_part(bundled_library() / request.param)


@pytest.fixture
def unwritable(tmp_path, monkeypatch):
    """A folder nobody may write into: mode 0o555, and for root (whom modes do not stop) the
    refusal the operating system gives everyone else (EACCES) when a file is made in it."""
    folder = tmp_path / "locked"
    folder.mkdir()
    folder.chmod(0o555)
    if os.access(folder, os.W_OK):
        real_mkstemp, real_mkdtemp = tempfile.mkstemp, tempfile.mkdtemp

        def refuse(real):
            def make(*args, dir=None, **kwargs):
                if dir is not None and Path(dir).resolve().is_relative_to(folder.resolve()):
                    raise PermissionError(errno.EACCES, "Permission denied", str(dir))
                return real(*args, dir=dir, **kwargs)

            return make

        monkeypatch.setattr(tempfile, "mkstemp", refuse(real_mkstemp))
        monkeypatch.setattr(tempfile, "mkdtemp", refuse(real_mkdtemp))
    yield folder
    folder.chmod(0o755)


@pytest.fixture(scope="session")
def demo_report(tmp_path_factory):
    """The bundled demo's report folder, written once for every test that reads it."""
    out = tmp_path_factory.mktemp("demo") / "report"
    result = invoke("demo", "--out", out)
    assert result.exit_code == 0, result.output  # the demo fails one job on purpose, yet exits 0
    return out


@pytest.fixture
def bjt(tmp_path):
    """The reference curve as an npn part in ``tmp_path/bjt`` (rth_jc 1.0 K/W, tj_max 150 °C, no thermal model)."""
    return read_part(write_part(tmp_path / "bjt"))

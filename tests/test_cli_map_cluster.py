"""catmap map --cluster: a malformed address is one clear line, not a traceback."""

from __future__ import annotations

from pathlib import Path

import pytest
from click.testing import CliRunner

from catmap.cli import main

pytest.importorskip("distributed")

FEED = Path(__file__).resolve().parents[1] / "feeds_demo" / "tallimbra.tsv"


@pytest.mark.parametrize("address", ["local:0", "somewhere:8786"])
def test_a_bad_cluster_address_is_a_user_error(address: str, tmp_path: Path) -> None:
    result = CliRunner().invoke(
        main,
        ["map", str(FEED), "--out", str(tmp_path / "out"), "--project", str(tmp_path / "p"),
         "--cluster", address],
    )
    assert result.exit_code == 1
    assert "--cluster" in result.output and "Traceback" not in result.output

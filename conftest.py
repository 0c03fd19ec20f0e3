"""Test set-up for tests/ and the doctests in mdao/: OpenMDAO reports off, each test in its own
temporary folder so that nothing is left behind."""
import pytest


@pytest.fixture(autouse=True)
def _quiet_openmdao(tmp_path, monkeypatch):
    monkeypatch.setenv("OPENMDAO_REPORTS", "0")
    monkeypatch.setenv("OPENMDAO_WORKDIR", str(tmp_path))
    monkeypatch.chdir(tmp_path)
    yield


@pytest.fixture
def cases_dir():
    """The bundled example cases."""
    from pathlib import Path
    return Path(__file__).resolve().parent / "cases"

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


@pytest.fixture(scope="module")
def module_folder(tmp_path_factory, request):
    """For module-scoped fixtures (a review or an optimization shared by a module's tests):
    OpenMDAO reports off and a temporary folder of the module's own as the working folder and
    OpenMDAO's, while the module runs. Yields the folder."""
    with pytest.MonkeyPatch.context() as mp:
        folder = tmp_path_factory.mktemp(request.module.__name__.rpartition(".")[2])
        mp.setenv("OPENMDAO_REPORTS", "0")
        mp.setenv("OPENMDAO_WORKDIR", str(folder))
        mp.chdir(folder)
        yield folder

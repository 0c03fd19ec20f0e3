"""The runnable examples under docs/examples, imported as modules for the tests."""
import importlib.util
from pathlib import Path

EXAMPLES = Path(__file__).resolve().parents[1] / "docs" / "examples"


def load_example(name):
    """``docs/examples/NAME.py`` imported as the module ``NAME``."""
    spec = importlib.util.spec_from_file_location(name, EXAMPLES / f"{name}.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module

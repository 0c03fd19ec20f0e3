"""Case files: TOML with quantities carrying units, validated and converted to SI.

- :mod:`mdao.case.schema`: every key, its type, dimension, default and range (model parameters
  from :mod:`mdao.parameters`);
- :mod:`mdao.case.loading`: reading, validation and the :class:`Case` it returns;
- :mod:`mdao.case.fragment`: the calibration fragments a case includes;
- :mod:`mdao.case.errors`: :class:`CaseError`, which names the key, the value and what is allowed.

docs/case-files.md describes every key.
"""
from mdao.case.errors import CaseError
from mdao.case.loading import (FAN_POINT_COLUMNS, Case, lift_tables, load_case, parse_case,
                               segment_lift)
from mdao.case.schema import SCHEMA, SEGMENT, dimension_of, spec_of

__all__ = ["Case", "CaseError", "FAN_POINT_COLUMNS", "SCHEMA", "SEGMENT", "dimension_of",
           "lift_tables", "load_case", "parse_case", "segment_lift", "spec_of"]

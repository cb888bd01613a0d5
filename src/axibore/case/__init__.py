"""Case files: TOML with units in, a validated ``Case`` of SI floats out.

``load_case(path)`` reads and validates a case file and raises ``CaseError`` listing every
problem as ``file: key.path: what was expected``. Unknown keys are errors. All pressures are
gauge (relative to ambient) unless the key says absolute.

schema.py (quantity types, one model a section), messages.py (validation errors as the file's
messages), rules.py (rules across keys), model.py (``Case``, ``case_from_dict``, ``load_case``),
resolved.py (the resolved case.toml a run writes).
"""

from .errors import CaseError
from .model import Case, case_from_dict, demo_case_path, load_case
from .resolved import resolved_dict
from .schema import (BORE_TEMPLATES, DEFAULT_AMBIENT, MAX_LEVEL, OPERATING_POINTS, CaseModel, JointSpec,
                     SweepSpec)

__all__ = ["BORE_TEMPLATES", "DEFAULT_AMBIENT", "MAX_LEVEL", "OPERATING_POINTS", "Case", "CaseError", "CaseModel",
           "JointSpec", "SweepSpec", "case_from_dict", "demo_case_path", "load_case", "resolved_dict"]

"""The calculation record: the sections a checker reads, built from an analysis as plain data (no HTML).

`build` makes a `Record`; `compare` and `input_changes` set two revisions side by side. The
sections live one module each (scope, inputs, method, steps, results), sharing a `Context`.
"""

from calc.record.assemble import build
from calc.record.compare import compare, describe_path, flatten, input_changes, key_values
from calc.record.parts import (
                               ROLE_TITLES,
                               ROLES,
                               SEVERITY_TITLES,
                               Assumption,
                               Equation,
                               Meta,
                               Record,
                               Reference,
                               Signature,
                               Step,
                               StepGroup,
                               Table,
                               revision_label,
)

__all__ = ["build", "compare", "describe_path", "flatten", "input_changes", "key_values", "ROLE_TITLES", "ROLES",
           "SEVERITY_TITLES", "Assumption", "Equation", "Meta", "Record", "Reference", "Signature", "Step",
           "StepGroup", "Table", "revision_label"]

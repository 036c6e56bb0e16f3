"""Trade studies: vary a base project into many cases, run each, keep every result in SQLite.

- :mod:`.spec` reads the study file and expands it into cases with stable ids (dotted paths
  into the project in :mod:`.paths`, parameter values in :mod:`.values`);
- :mod:`.runner` runs the cases (progress, resume, faults) and stores each as it ends;
- :mod:`.backends` is where they run: a local process pool or a Dask cluster;
- :mod:`.worker` runs one case in a worker and checks its output;
- :mod:`.store` keeps the study and each finished case in one SQLite file (its writer lock
  in :mod:`.lock`, read-only access in :mod:`.reading`);
- :mod:`.summary` tabulates cases and returns arrays for plots.

The format is described in docs/study-format.md.
"""

from .reading import StoredCase, StoredStudy, read_cases, read_runs, read_study
from .runner import StudyOutcome, run_study
from .spec import Case, StudySpec, case_project, expand, load_study, parse_study
from .store import CaseRecord, StudyStore
from .summary import (
    PlotSeries,
    export_csv,
    plot_series,
    summary_rows,
    summary_table,
    variant_values,
)  # fmt: skip
from .worker import DEFAULT_CASE_FN, execute_case, resolve_case_fn

__all__ = [
    "DEFAULT_CASE_FN", "Case", "CaseRecord", "PlotSeries", "StoredCase", "StoredStudy",
    "StudyOutcome", "StudySpec", "StudyStore", "case_project", "execute_case", "expand",
    "export_csv", "load_study", "parse_study", "plot_series", "read_cases", "read_runs",
    "read_study", "resolve_case_fn", "run_study", "summary_rows", "summary_table",
    "variant_values",
]  # fmt: skip

"""The study: the pipeline from a project and its data to one typed result.

:func:`run_study` turns a project into a :class:`StudyResult`; the modules
of this package are its stages (data preparation, the facts a verdict
sentence needs, the result type).  No Qt.
"""

from covariscope.study.pipeline import run_study
from covariscope.study.result import ESTIMATE_KEYS, Progress, StudyResult

__all__ = ["ESTIMATE_KEYS", "Progress", "StudyResult", "run_study"]

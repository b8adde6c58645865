"""Study runner: a TOML study file in, a folder with report, tables, figures and results out."""

from evidence.study.demo import run_demo
from evidence.study.runner import StudyResult, run_study
from evidence.study.spec import PressureSpec, StudySpec, parse_spec, read_spec

__all__ = ["PressureSpec", "StudyResult", "StudySpec", "parse_spec", "read_spec", "run_demo",
           "run_study"]

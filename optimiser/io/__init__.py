"""Reading and writing study files: TOML study, profile/catalogue/design CSV, JSON results."""

from optimiser.io.errors import InputError
from optimiser.io.study_file import load_design, load_study

__all__ = ["InputError", "load_design", "load_study"]

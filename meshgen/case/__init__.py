"""The case model: validated parameters (pydantic), TOML loading, ``--set`` overrides, starter templates."""

from .loading import (
           DEFAULT_CASE_TOML,
           TEMPLATES_DIR,
           apply_overrides,
           case_to_toml,
           load_case,
           parse_case,
           read_case_file,
)
from .model import Case

__all__ = ["DEFAULT_CASE_TOML", "TEMPLATES_DIR", "Case", "apply_overrides", "case_to_toml", "load_case", "parse_case",
           "read_case_file"]

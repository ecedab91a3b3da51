"""Allow ``python -m rulecheck``."""

from rulecheck.cli import main_entry

main_entry()

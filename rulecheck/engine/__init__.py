"""The rule engine: rule settings (``context``), the run over the registered rules and the
waivers (``run``), ``rulecheck.toml`` (``config``) and baselines (``baseline``).

The rule functions themselves live in :mod:`rulecheck.checks`; their data in ``rules/``.
"""

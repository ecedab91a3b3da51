"""Imported by :mod:`rulecheck.cli` before any other module of ours: the record classes
defined after it take their generated methods' code from the per-user cache
(:mod:`rulecheck.record_methods`) instead of compiling it every run."""

from rulecheck.record_methods import install

install()

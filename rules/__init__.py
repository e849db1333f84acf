"""Earshot's rules engine: pure Python and numpy, no Django.

parse_design() turns a design document into typed objects, attach_measurements() reads the Touchstone
files it names, and evaluate() runs every registered check and returns the checklist.
"""

"""Geometry of the structure: conformers, equivalent protons, planes, circuits."""

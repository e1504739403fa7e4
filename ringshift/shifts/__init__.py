"""Proton classes, reference shifts and the prediction pipeline."""

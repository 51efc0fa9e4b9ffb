"""Validation: schemas, vectorised row checks and the findings they produce."""

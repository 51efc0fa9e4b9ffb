"""Tests for surveytools.indicators (a package so test basenames may repeat elsewhere)."""

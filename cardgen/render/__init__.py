"""Rendering: plans in, files out (SVG plots, HTML, PDF, JSON/CSV/GPX). Never
computes physics. matplotlib and WeasyPrint load lazily, only here."""

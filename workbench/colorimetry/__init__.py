"""Colorimetry: CIE tables, tristimulus values, colour coordinates and differences,
display primaries and target colour-matching functions, gamuts, emitter sets,
luma and colour-difference signals, open sample sets."""

"""Reading and writing files: spectra as CSV, atomic saving.

Everything that touches the disk for the computation lives here (and in the
design loader); the computation itself receives arrays and resolved designs.
"""

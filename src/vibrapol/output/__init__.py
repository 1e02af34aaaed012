"""Tables and files written for the user.

- :mod:`~vibrapol.output.tables`: the per-mode Raman table as text, CSV (conditions as ``#``
  lines), JSON, Markdown, LaTeX and DataFrames;
- :mod:`~vibrapol.output.symmetry`: the symmetry report;
- :mod:`~vibrapol.output.spectra`: spectrum, stick and sweep files;
- :mod:`~vibrapol.output.assignments`: assignment and ranking files.

These modules sit on top: the numeric modules never import them.
"""

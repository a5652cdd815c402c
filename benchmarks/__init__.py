"""Speed and scale benchmarks for ``commission`` (issue 5, part 4).

Run them all with ``python benchmarks/run.py`` (or ``python -m benchmarks.run``) from the
repository root; ``--quick`` gives a smaller run. They are not part of the pytest run and
assert nothing: each figure is printed as a ratio against a baseline measured in the same
run, beside its target. See ``benchmarks/README.md``.
"""

"""Shared test set-up.

This file puts ``tests/`` on ``sys.path`` (pytest's default import mode adds
the folder of the first ``conftest.py``), so every test folder imports the
shared helpers as ``support.<module>``: the independent nodal solver
(``reference_solver``), the library checks, the spectral reference, the
synthetic stack, the adversarial generator and the command-line checks.
"""

"""Renderers: turn a :class:`~symbias.formula.Formula` (and its context) into text.

One module per output form: :mod:`~symbias.render.text` (rich panels for the
terminal), :mod:`~symbias.render.json` (the stable machine interface),
:mod:`~symbias.render.latex`.  Renderers never compute results; they only
format what the analysis steps produced.
"""

"""The linear side of the symbolic engine: expanded network, MNA stamps, cofactor solve, numeric twin.

* :mod:`~symbias.linear.network`: Circuit -> :class:`~symbias.linear.network.LinearNetwork`
  (every element replaced by its small-signal primitives);
* :mod:`~symbias.linear.polys`: polynomial rings (python-flint, sympy fallback);
* :mod:`~symbias.linear.mna`: stamps and the memoised cofactor solve, exact;
* :mod:`~symbias.linear.numeric`: the same problems solved with numbers, batched.
"""

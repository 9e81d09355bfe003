"""An independent reference for the equilibrium core, and protomix compared with it.

* :mod:`.spec` — a plain description of a mixture and the preset text it makes;
* :mod:`.solver` — the high-precision reference solver (mpmath);
* :mod:`.strategies` — random mixtures for hypothesis;
* :mod:`.compare` — protomix through its public contract, field by field against the reference.
"""

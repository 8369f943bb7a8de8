"""The model layer: component data, the ideal gas, the generalised cubic and
its parts, and the :class:`~eosfill.model.mixture.Mixture` they make up.

Depends on nothing in eosfill but ``eosfill.errors`` and ``eosfill.constants``.
"""

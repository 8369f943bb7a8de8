"""State solvers: one entry per specification pair, pure fluids and mixtures,
single or two phase (:func:`eosfill.states.dispatch.solve_state`), and the
public :class:`~eosfill.states.fluid.Fluid`.
"""

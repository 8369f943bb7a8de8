"""The phase codes every layer shares (no imports: the compiled kernels and the State both use them).

``PHASES[code]`` is the label of a code: GAS, LIQUID and SUPERCRITICAL label single-phase
states (:func:`eosfill.model.phase_label.phase_kind`), TWO_PHASE and THREE_PHASE split ones.
"""

PHASES = ("gas", "liquid", "supercritical", "two-phase", "three-phase")
GAS, LIQUID, SUPERCRITICAL, TWO_PHASE, THREE_PHASE = 0, 1, 2, 3, 4

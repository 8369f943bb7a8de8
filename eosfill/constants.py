"""Physical constants and the reference state.

R : molar gas constant, CODATA 2018 exact value (Tiesinga et al., Rev. Mod.
    Phys. 93, 025010, 2021): 8.314462618 J/(mol K).
Reference state (per component): ideal gas, H = 0 and S = 0 at
    T0 = 298.15 K and P0 = 101325 Pa.
"""
R = 8.314462618  # J/(mol K), CODATA 2018
T0 = 298.15  # K, reference temperature of H° and S°
P0 = 101325.0  # Pa, reference pressure of S°
T_STANDARD_15C = 288.15  # K, 15 °C

"""The planner's stages, each a small pure function with a frozen result.

resolve inputs (inputs) → metabolism and CO2 target (metabolic) → dead space and mechanics (airway) →
breathing system and atmosphere (circuit) → timing rule (timing) → the Basis every evaluation needs
(basis) → choice of settings, evaluation, oxygen and fresh gas, cautions (finish).
"""

"""Spec × Circuit → SpecResult: the nominal check, Monte Carlo and worst case over part
tolerances, part stress and preferred-value lint."""

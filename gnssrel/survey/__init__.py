"""Static precise positions from dual-frequency code and carrier phase (issue 15).

``arcs`` (signal pairs, combinations, cycle slips, arcs), ``windup`` (phase wind-up),
``tides`` (solid Earth tide), ``model`` (the observation model with term switches),
``solve`` (batch least squares, receiver clock eliminated per epoch), ``effects`` (term
effects, k of the periodic term from phase), ``static`` (the whole survey of one log).
"""

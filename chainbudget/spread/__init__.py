"""How every figure spreads over the parts' tolerances: the ``spread`` command.

`chainbudget.spread.parts` finds the toleranced parts and their bounds,
`chainbudget.spread.evaluate` works out the figures of a batch of trials in one solve,
`chainbudget.spread.run` runs the Monte Carlo, the corners, the sensitivities and the
yields, `chainbudget.spread.view` and `chainbudget.spread.plot` show them, and
`chainbudget.spread.command` is the command's body. docs/tolerances.md says what it covers.
"""

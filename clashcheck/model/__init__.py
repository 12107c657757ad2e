"""Layer 1, the physics: plain SI dataclasses and array functions.

Pack, motor, propeller, air, the drive's steady state, excitation orders,
modes and margin policies, arm beams, and the :class:`~clashcheck.model.build.Build`
that holds them.  Nothing here reads text or files or imports pint.
"""

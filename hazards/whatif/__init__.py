"""What-if exploration of a semi-batch step's dosing time and process temperature.

Nothing here writes, except `services.apply_point`, which changes the step through the
normal record service (so the indicators, the review and the audit trail treat it as any
other change of the step).
"""

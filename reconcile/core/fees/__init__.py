"""The fee-leakage audit: commissions and financing against the schedule the user agreed.

``rules`` holds the schedule as values and ``period`` the audit window; ``facts`` dates the
fills; ``commissions`` and ``financing`` price every charge (``daycount`` gives the nights and
day-count fractions); ``findings`` classifies them and ``totals`` sums them; ``audit`` is the
entry point, :func:`reconcile.audit_fees`.
"""

"""The fee-leakage audit: commissions and financing against the schedule the user agreed.

``rules`` holds the schedule as values, ``commissions`` and ``financing`` price every charge,
``daycount`` the nights and day counts, ``totals`` the sums, ``audit`` the entry point.
"""

"""The caution every report carries."""

CAUTION = (
    "reconcile's output is not tax, accounting or legal advice. Local rules and a licensed "
    "professional prevail."
)

"""Formulas from standards, one module per topic (``iso6946``: plane layers,
surface resistances and unventilated air layers). Each function is named for
the quantity it returns, with units in brackets and the clause it comes from.
"""

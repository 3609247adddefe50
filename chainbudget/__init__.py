"""chainbudget: gain, headroom, noise, drive and supply budgets for small audio amplifiers."""

__version__ = "0.1.0"

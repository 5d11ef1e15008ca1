"""Pore-size distributions: a kernel of model isotherms over pore sizes (`kernel`), a measured isotherm
expressed as a non-negative, regularised combination of them (`inversion`), and the distribution carried to
another gas or temperature in the same sample (`carry`)."""

"""Comparison of runs, object-age confrontation and age-prior reweighting.

Modules: :mod:`~agepost.compare.runs` loads run folders or chains,
:mod:`~agepost.compare.shifts` summarises shifts and tensions between runs,
:mod:`~agepost.compare.objects` tests the age of the universe against old objects and
solves for their formation redshifts, :mod:`~agepost.compare.reweight` reweights a run by
an independent age constraint.
"""

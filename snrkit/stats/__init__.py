"""Statistics of a detection: the nested likelihood-ratio tests and what follows from them.

* :mod:`snrkit.stats.likelihood` -- the profiled Delta chi^2 of nested linear models;
* :mod:`snrkit.stats.probability` -- significances and (noncentral) chi^2 probabilities;
* :mod:`snrkit.stats.search` -- the transits needed (closed form or secant search);
* :mod:`snrkit.stats.stacker` -- the stacker: significance curves, probabilities;
* :mod:`snrkit.stats.detect` -- the three above in one namespace, with the input checks;
* :mod:`snrkit.stats.hypotheses` -- the nested models of each test, the readout per target;
* :mod:`snrkit.stats.refit` -- bounded re-fits of the null, Fisher errors with priors;
* :mod:`snrkit.stats.forecast` -- Fisher matrices, planet-parameter draws, programme hours.
"""

__all__ = []

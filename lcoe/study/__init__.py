"""Studies: ``lcoe run`` (one case), ``lcoe compare`` (cases at their sites), ``lcoe sweep``
(sites x technologies) share one trial design, one sharing rule and one executor; the
lender's case (:mod:`~lcoe.study.bankability`), the physics and claim audit
(:mod:`~lcoe.study.audit`, :mod:`~lcoe.study.claim_ratio`) and the value of information
live here too.

- :mod:`lcoe.study.design`: columns of the design (the sharing rule), rank correlation,
  draws per block of trials from ``SeedSequence(seed, spawn_key=(0, block))``;
- :mod:`lcoe.study.shared`: inputs declared once for a study, cross-case correlations;
- :mod:`lcoe.study.trials`: runs, the mapping of draws to each run's inputs and weather
  factors, chunk evaluation through :func:`lcoe.model.evaluate`;
- :mod:`lcoe.study.executor`: serial, local dask workers, or an existing dask scheduler;
- :mod:`lcoe.study.single` and :mod:`lcoe.study.case_study`: the study of one case;
- :mod:`lcoe.study.run`, :mod:`lcoe.study.compare`, :mod:`lcoe.study.plan` +
  :mod:`lcoe.study.sweep`: the three commands' studies (no printing, no files).

Sharing rule (the same in every command): a site's weather (year-to-year factors and
``resource_sd``) is one draw per trial per site, shared by every technology there; a
technology's energy-model uncertainty (``model_sd`` and the other ``*_sd``) is its own;
inputs declared once for the study are one draw per trial for every run; each case's
own ``[uncertain]`` inputs are its own unless the study declares a cross-case rank
correlation.

May import: :mod:`lcoe.model`, :mod:`lcoe.plant`, :mod:`lcoe.money`, :mod:`lcoe.site`,
:mod:`lcoe.uncertainty`, :mod:`lcoe.case`. Never the exporters or the command line.
"""

#: One sentence of the sharing rule, carried in every study's notes.
SHARING_RULE = ("Sharing rule: a site's weather (year-to-year factors and resource_sd) is one "
                "draw per trial per site for every technology there; each technology's "
                "energy-model uncertainty (model_sd and other *_sd) and each case's own "
                "[uncertain] inputs are its own, independent of the other cases unless a "
                "cross-case rank correlation is declared; inputs declared once for the whole "
                "study are one draw per trial for all runs.")

"""Value of information at each site of a sweep: which uncertainty decides the technology.

At a site the decision is which technology to build. The value of a technology in a trial is
minus its real LCOE, i.e. minus the cost of delivering one kWh (discounted at each run's real
rate), so EVPI and EVPPI come out in currency per kWh delivered. The inputs conditioned on
are the sampled inputs of the site's runs: a column that is identical in every technology that
has it (a shared draw) is one input; otherwise each technology's draw is its own input,
labelled ``input [technology]``. Orchestration only: the estimators are those of
:mod:`lcoe.uncertainty.voi`, on the trials the sweep already ran.
"""

from __future__ import annotations

import numpy as np

from .uncertainty.voi import DEFAULT_BOOTSTRAP, evpi, evppi_table

#: What the value of a technology is (printed with every result).
SWEEP_BASIS = ("value of a technology in a trial = -(its real LCOE): minus the cost of "
               "delivering one kWh; figures in currency per kWh")


def site_inputs(trials: dict, techs: list, readable=None) -> tuple[np.ndarray, list, list]:
    """Distinct sampled inputs of a site's runs: (n, d) values, their names and labels.

    Parameters
    ----------
    trials : dict
        technology -> object with ``names`` (tuple of str) and ``X`` (n, d).
    techs : list of str
    readable : callable, optional
        ``readable(name, technology)`` -> (label of the input, name of the technology) for the
        labels; default: the names as they are.

    Returns
    -------
    x : numpy.ndarray
        (n, d) values.
    names : list of str
        Dotted key, with ``[technology]`` when technologies draw it apart (the JSON's key).
    labels : list of str
        Readable label with unit, with the technology's case name when drawn apart.
    """
    found: list[tuple[str, str, np.ndarray]] = []  # (name, first technology, values)
    for t in techs:
        for j, name in enumerate(trials[t].names):
            col = np.asarray(trials[t].X[:, j], dtype=float)
            if not any(n == name and np.array_equal(c, col) for n, _, c in found):
                found.append((name, t, col))  # a shared draw is listed once
    names = [n for n, _, _ in found]
    readable = readable or (lambda n, t: (n, t))
    keys, labels = [], []
    for n, t, _ in found:
        text, tech = readable(n, t)
        apart = names.count(n) > 1
        keys.append(f"{n} [{t}]" if apart else n)
        labels.append(f"{text} [{tech}]" if apart else text)
    n_trials = len(trials[techs[0]].lcoe_real)
    x = np.column_stack([c for _, _, c in found]) if found else np.empty((n_trials, 0))
    return x, keys, labels


def sweep_site_voi(result, n_boot: int = DEFAULT_BOOTSTRAP, seed: int = 1,
                   top: int = 3) -> list[dict]:
    """EVPI and the top EVPPI rows of every site with at least two completed technologies.

    Parameters
    ----------
    result : SweepResult
        Its ``trials`` ((site, technology) -> RunTrials) and ``sites``.
    n_boot : int
        Bootstrap resamples.
    seed : int
    top : int
        EVPPI rows kept per site (largest first).

    Returns
    -------
    list of dict
        ``site``, ``options``, ``choice_now``, ``evpi_per_kwh``, ``evpi_se_per_kwh``,
        ``evppi`` (list of :meth:`InfoValue.to_dict` with values in currency/kWh, and
        ``label``: the input's readable label with unit),
        ``n_trials``, ``basis``. Sites with fewer than two completed technologies are left
        out (nothing to choose).
    """
    from .labels import input_label

    cases = {t.label: t.case_name for t in result.plan.technologies}

    def readable(name: str, tech: str) -> tuple[str, str]:
        return input_label(name, result.plan.currency), cases.get(tech, tech)

    out = []
    seqs = np.random.SeedSequence(seed).spawn(max(len(result.sites), 1))
    for site, sq in zip(result.sites, seqs):
        techs = [t for (s, t) in result.trials if s == site.name]
        if len(techs) < 2:
            continue
        runs = {t: result.trials[(site.name, t)] for t in techs}
        values = -np.column_stack([runs[t].lcoe_real for t in techs])
        s_evpi, s_rows = sq.spawn(2)
        whole = evpi(values, n_boot, np.random.default_rng(s_evpi))
        x, keys, labels = site_inputs(runs, techs, readable)
        keep = [j for j in range(x.shape[1]) if np.ptp(x[:, j]) > 0]
        rows = evppi_table(values, x[:, keep], [keys[j] for j in keep], None, n_boot,
                           np.random.default_rng(s_rows)) if keep else []
        rows.sort(key=lambda r: -r.value)
        label_of = dict(zip(keys, labels))
        mean = values.mean(axis=0)
        out.append({"site": site.name, "options": techs,
                    "choice_now": techs[int(np.argmax(mean))],
                    "evpi_per_kwh": whole.value, "evpi_se_per_kwh": whole.se,
                    "evppi": [{**r.to_dict(), "label": label_of[r.name]} for r in rows[:top]],
                    "n_trials": whole.n_trials,
                    "basis": SWEEP_BASIS})
    return out


def table_lines(rows: list[dict], currency: str) -> list[str]:
    """Lines for the CLI: per site, EVPI and the input most worth learning [currency/MWh]."""
    if not rows:
        return []

    def mwh(x: float) -> str:
        return f"{max(1000 * x, 0.0):.3f}"  # no "-0.000" from rounding noise

    lines = [f"  Worth up to ... to learn before choosing the technology ({currency}/MWh "
             f"delivered; EVPI = everything, +/- standard error)"]
    for r in rows:
        top = r["evppi"][0] if r["evppi"] else None
        best = (f"; most: {top.get('label', top['name'])} {mwh(top['value'])} (+/- {mwh(top['se'])})"
                + (", below its error" if top["below_se"] else "")) if top else ""
        lines.append(f"  {r['site'][:24]:<24} EVPI {mwh(r['evpi_per_kwh'])} (+/- "
                     f"{mwh(r['evpi_se_per_kwh'])}){best}")
    return lines

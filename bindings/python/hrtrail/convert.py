"""Results as pandas DataFrames and astropy QTables.

    df = hrtrail.to_pandas(states)      # STATE_DTYPE array -> DataFrame
    t = hrtrail.to_table(states)        # -> astropy QTable with units

Columns are the vocabulary of tracks/FORMAT.md.  In a DataFrame, phase and
remnant are pandas categoricals of the library's keys (ms, rgb, co_wd, ...),
status a categorical of Status names, flags the integer bits; struct_size
and the reserved tail are left out.  In a QTable linear quantities carry
their units (Msun, yr) and logarithmic ones astropy's logarithmic units
(dex(solLum), dex(K), dex(solRad), dex(cm / s2)), so t["log_l_lsun"].physical
is L in solar luminosities (astropy's solLum is the IAU 2015 nominal value,
as hrtrail's).  pandas (python3-pandas) and astropy (python3-astropy) are
needed only by these functions.
"""
try:
    import numpy as _np
except ImportError:  # needed by these calls only
    _np = None

from .enums import Phase, Remnant, Status

_DROP = ("struct_size", "reserved")

#: unit of each state field in a QTable (astropy unit strings); fields not listed are plain numbers
STATE_UNITS = {
    "initial_mass_msun": "solMass", "age_yr": "yr", "log_l_lsun": "dex(solLum)", "log_teff_k": "dex(K)",
    "log_r_rsun": "dex(solRad)", "log_g_cgs": "dex(cm / s2)", "mass_msun": "solMass",
    "he_core_mass_msun": "solMass", "co_core_mass_msun": "solMass", "phase_start_yr": "yr",
    "phase_end_yr": "yr", "remnant_mass_msun": "solMass",
}


def _cat(codes, enum_cls, key):
    import pandas as pd
    members = list(enum_cls)
    names = [key(m) for m in members]
    lookup = {int(m): key(m) for m in members}
    vals = [lookup.get(int(c)) for c in codes]
    return pd.Categorical(vals, categories=names)


def _fields(a):
    return [n for n in a.dtype.names if n not in _DROP]


def to_pandas(states):
    """A STATE_DTYPE array (Grid.evaluate, isochrone, Star.track) as a pandas DataFrame.

    One row per star (the array flattened); phase and remnant categoricals of
    their keys, status of Status names; no struct_size or reserved columns."""
    import pandas as pd
    a = _np.asarray(states).ravel()
    cols = {}
    for n in _fields(a):
        if n == "phase":
            cols[n] = _cat(a[n], Phase, lambda m: m.key)
        elif n == "remnant":
            cols[n] = _cat(a[n], Remnant, lambda m: m.key)
        elif n == "status":
            cols[n] = _cat(a[n], Status, lambda m: m.name)
        else:
            cols[n] = _np.array(a[n])
    return pd.DataFrame(cols)


def to_table(states):
    """A STATE_DTYPE array as an astropy QTable with units (STATE_UNITS); phase and remnant as their keys,
    status as its Status name; no struct_size or reserved columns."""
    import astropy.units as u
    from astropy.table import QTable
    a = _np.asarray(states).ravel()
    t = QTable()
    for n in _fields(a):
        if n == "phase":
            t[n] = [Phase(int(p)).key if int(p) in Phase._value2member_map_ else str(int(p)) for p in a[n]]
        elif n == "remnant":
            t[n] = [Remnant(int(r)).key if int(r) in Remnant._value2member_map_ else str(int(r)) for r in a[n]]
        elif n == "status":
            t[n] = [Status(int(c)).name if int(c) in Status._value2member_map_ else str(int(c)) for c in a[n]]
        elif n in STATE_UNITS:
            t[n] = _np.array(a[n]) * u.Unit(STATE_UNITS[n])
        else:
            t[n] = _np.array(a[n])
    return t


def samples_to_pandas(samples):
    """Posterior draws (FitResult.samples, SAMPLE_DTYPE) as a DataFrame; phase a categorical of keys."""
    import pandas as pd
    a = _np.asarray(samples).ravel()
    cols = {n: (_cat(a[n], Phase, lambda m: m.key) if n == "phase" else _np.array(a[n]))
            for n in a.dtype.names if n != "reserved_"}
    return pd.DataFrame(cols)


def fits_to_pandas(results):
    """FitResults (FitModel.fit_many) as a DataFrame, one row each, in the command line's column names."""
    import pandas as pd
    df = pd.DataFrame([r.as_dict() for r in results])
    if len(df):
        keys = [m.key for m in Phase]
        for c in ("phase", "phase_second"):
            df[c] = pd.Categorical(df[c], categories=keys)
    return df


def _summary_frame(s, table="phases"):
    import pandas as pd
    if table == "phases":
        rows, key, enum_cls = s.phases(), "phase", Phase
        cols = ["phase", "stars", "initial_mass_msun", "mass_msun", "l_lsun"]
    else:
        rows, key, enum_cls = s.remnants(), "remnant", Remnant
        cols = ["remnant", "stars", "mass_msun"]
    keys = [r[key].key for r in rows]
    df = pd.DataFrame(rows, columns=cols)
    df[key] = pd.Categorical(keys, categories=[m.key for m in enum_cls])
    df.insert(0, "age_yr", s.age_yr)
    return df


def forecast_to_pandas(f):
    """The states of a Forecast (one row per future time) as a DataFrame: dt_yr, phase (a categorical of
    the phase keys), luminous_frac, and each interval as NAME, NAME_lo, NAME_hi (log_l_lsun dex, teff_k K,
    r_rsun Rsun, mass_msun Msun)."""
    import pandas as pd
    rows = []
    for st in f.states:
        r = {"dt_yr": st["dt_yr"], "phase": getattr(st["phase"], "key", str(st["phase"])),
             "luminous_frac": st["luminous_frac"]}
        for n in ("log_l_lsun", "teff_k", "r_rsun", "mass_msun"):
            r[n], r[n + "_lo"], r[n + "_hi"] = st[n].median, st[n].lo, st[n].hi
        rows.append(r)
    df = pd.DataFrame(rows)
    if len(df):
        df["phase"] = pd.Categorical(df["phase"], categories=[m.key for m in Phase])
    return df

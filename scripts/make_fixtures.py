#!/usr/bin/env python3
"""Regenerate every fixture under fixtures/{demo,formats,bad,edge,worked}.

All data are invented and defined in this file; nothing is downloaded. The only
randomness (the garbage bytes of the unreadable Parquet file) uses a fixed seed.
Expected results come from two independent computations:

* fixtures/demo/expected*.csv, fixtures/edge/expected*.csv: benches/reference_audit.py
  (pandas + scipy), the reference implementation of SPEC §4;
* fixtures/worked/expected.json: mpmath at 40 significant digits, with exact integer
  growth functions and exact binomial tails, not using scipy at all.

Run from anywhere:  python3 scripts/make_fixtures.py
"""
from __future__ import annotations

import json
import math
import random
import sys
from fractions import Fraction
from pathlib import Path

import mpmath
import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.feather as feather
import pyarrow.ipc as ipc
import pyarrow.parquet as pq
import scipy

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT / "benches"))
import reference_audit as ref  # noqa: E402

FIX = ROOT / "fixtures"

# Canonical column order of the fixtures (SPEC §3), plus a free-text `notes` column,
# which gapcert ignores like any other unknown column.
COLUMNS = [
    "run", "family", "dim", "vc_dim", "size", "weights", "layers", "units", "leaves",
    "features", "train_n", "train_error_rate", "train_accuracy", "holdout_n",
    "holdout_error_rate", "holdout_accuracy", "holdout_misclassified", "holdout_set",
    "candidates", "claimed_accuracy", "logged_at", "notes",
]
INT_COLUMNS = {"dim", "vc_dim", "size", "weights", "layers", "units", "leaves", "features",
               "train_n", "holdout_n", "holdout_misclassified", "candidates"}
FLOAT_COLUMNS = {"train_error_rate", "train_accuracy", "holdout_error_rate",
                 "holdout_accuracy", "claimed_accuracy"}

NORTH = "clips-holdout-north-v2"   # 6000 clips, shared by six runs
SOUTH = "clips-holdout-south-v1"   # 2400 clips, shared by five runs


def run(run, family=None, *, train_n=None, train_error_rate=None, train_accuracy=None,
        holdout_n, holdout_error_rate=None, holdout_accuracy=None,
        holdout_misclassified=None, holdout_set=None, candidates=None,
        claimed_accuracy=None, logged_at, notes, **params):
    row = dict(run=run, family=family, train_n=train_n, train_error_rate=train_error_rate,
               train_accuracy=train_accuracy, holdout_n=holdout_n,
               holdout_error_rate=holdout_error_rate, holdout_accuracy=holdout_accuracy,
               holdout_misclassified=holdout_misclassified, holdout_set=holdout_set,
               candidates=candidates, claimed_accuracy=claimed_accuracy,
               logged_at=logged_at, notes="invented: " + notes)
    row.update(params)
    return {c: row.get(c) for c in COLUMNS}


# ---------------------------------------------------------------------------
# The demo: Kestrel Water (an invented utility), acoustic leak detection.
# ---------------------------------------------------------------------------
DEMO = [
    # --- shared split NORTH (n = 6000): six runs compared on it, K = 6 -------------
    run("kw-lin24-bands", "linear", dim=24, train_n=180000, train_error_rate=0.081,
        holdout_n=6000, holdout_misclassified=511, holdout_set=NORTH,
        claimed_accuracy=0.90, logged_at="2024-09-02T08:14:05Z",
        notes="logistic model on 24 band energies"),
    run("kw-tree-l32", "tree", leaves=32, features=64, train_n=180000, train_accuracy=0.947,
        holdout_n=6000, holdout_accuracy=0.9415, holdout_set=NORTH,
        claimed_accuracy=0.93, logged_at="2024-09-02 10:40",
        notes="32-leaf tree on 64 binarised band flags"),
    run("kw-relu-3x80", "relu_net", weights=3300, layers=3, units=80, train_n=180000,
        train_error_rate=0.021, holdout_n=6000, holdout_error_rate=0.0395,
        holdout_set=NORTH, claimed_accuracy=0.97, logged_at="2024-09-03T16:02:44+02:00",
        notes="small ReLU net; release note claims 97 percent"),
    run("kw-stump-f64", "stump", features=64, train_n=180000, train_error_rate=0.183,
        holdout_n=6000, holdout_error_rate=0.187, holdout_set=NORTH,
        logged_at="2024-09-03 17:30", notes="single-threshold baseline"),
    run("kw-box-d6", "box", dim=6, train_n=180000, train_error_rate=0.112, holdout_n=6000,
        holdout_misclassified=690, holdout_set=NORTH, claimed_accuracy=0.87,
        logged_at="2024-09-04T09:12:00Z", notes="axis-aligned box rule on 6 features"),
    run("kw-lin24-l1", "linear", dim=24, train_n=180000, train_error_rate=0.079,
        holdout_n=6000, holdout_accuracy=0.9178, holdout_set=NORTH,
        claimed_accuracy=0.915, logged_at="2024-09-04 11:05",
        notes="sparse variant of kw-lin24-bands"),
    # --- shared split SOUTH (n = 2400): five runs, one after a 20-trial search ------
    run("kw-gbm-400", "gbm", train_n=150000, train_error_rate=0.031, holdout_n=2400,
        holdout_misclassified=86, holdout_set=SOUTH, candidates=20,
        claimed_accuracy=0.95, logged_at="2024-09-10T13:45:10Z",
        notes="boosted ensemble picked from 20 tuning trials; family has no bound"),
    run("kw-vc40-spectral", "vc", vc_dim=40, train_n=150000, train_error_rate=0.06,
        holdout_n=2400, holdout_error_rate=0.0625, holdout_accuracy=0.9375,
        holdout_misclassified=150, holdout_set=SOUTH, claimed_accuracy=0.92,
        logged_at="2024-09-10 15:20", notes="kernel model with a VC dimension bound of 40"),
    run("kw-rules-4096", "finite", size=4096, train_n=150000, train_error_rate=0.098,
        holdout_n=2400, holdout_accuracy=0.899, holdout_set=SOUTH, claimed_accuracy=0.88,
        logged_at="2024-09-11T07:58:31Z", notes="best of 4096 hand-written rule lists"),
    run("kw-ray-rms", "ray", train_n=150000, train_accuracy=0.759, holdout_n=2400,
        holdout_error_rate=0.244, holdout_set=SOUTH, logged_at="2024-09-11 08:30",
        notes="threshold on clip loudness"),
    run("kw-interval-band7", "interval", train_n=150000, train_error_rate=0.205,
        holdout_n=2400, holdout_misclassified=509, holdout_set=SOUTH,
        logged_at="2024-09-11T09:02:17-04:00", notes="band-7 energy inside a window"),
    # --- runs with their own split or none -----------------------------------------
    run("kw-lin8-pvc", "linear", dim=8, train_n=2000000, train_error_rate=0.10,
        holdout_n=5000, holdout_misclassified=800, holdout_set="clips-holdout-pvc-mains",
        claimed_accuracy=0.80, logged_at="2024-09-12T10:00:00Z",
        notes="trained on cast-iron mains; tested on PVC mains"),
    run("kw-lin8-cast", "linear", dim=8, train_n=2000000, train_error_rate=0.10,
        holdout_n=400, holdout_misclassified=44, holdout_set="clips-spot-cast-iron",
        logged_at="2024-09-12T11:30:00Z",
        notes="same model as kw-lin8-pvc; spot check on 400 fresh cast-iron clips"),
    run("kw-tree-l64-east", "tree", leaves=64, features=64, train_n=120000,
        train_error_rate=0.09, holdout_n=3000, holdout_misclassified=63,
        holdout_set="clips-holdout-east", claimed_accuracy=0.95,
        logged_at="2024-09-12 14:10", notes="east split later found to share clips with training"),
    run("kw-relu-pilot", "relu_net", weights=900, layers=2, units=40, train_n=8000,
        train_error_rate=0.015, holdout_n=40, holdout_misclassified=1,
        holdout_set="pilot-clips-june", claimed_accuracy=0.95,
        logged_at="2024-09-13T11:11:11Z", notes="pilot on 40 hand-labelled clips"),
    run("kw-thr-firmware", "threshold_net", weights=150, layers=2, units=12, train_n=40000,
        train_error_rate=0.071, holdout_n=1800, holdout_error_rate=0.076,
        holdout_set="clips-holdout-firmware", claimed_accuracy=0.90,
        logged_at="2024-09-13 16:45", notes="sign-unit net that fits on the logger"),
    run("kw-legacy-rule", None, train_n=30000, train_error_rate=0.118, holdout_n=1200,
        holdout_misclassified=146, claimed_accuracy=0.85,
        logged_at="2024-09-14T09:30:00Z", notes="rule from the old system; family not logged"),
    run("kw-lin12-sweep", "linear", dim=12, train_n=90000, train_accuracy=0.913,
        holdout_n=3500, holdout_error_rate=0.0911, candidates=8, claimed_accuracy=0.89,
        logged_at="2024-09-14 10:15", notes="best of 8 regularisation strengths; split not logged"),
    run("kw-vc12-small", "vc", vc_dim=12, train_n=25000, train_error_rate=0.142,
        holdout_n=2000, holdout_accuracy=0.853, logged_at="2024-09-15T12:00:00Z",
        notes="exploratory; no claim made"),
    run("kw-stump-f12", "stump", features=12, train_n=60000, train_error_rate=0.201,
        holdout_n=4000, holdout_misclassified=812, holdout_set="clips-holdout-west",
        claimed_accuracy=0.78, logged_at="2024-09-15 13:40", notes="baseline for the west district"),
    run("kw-forest-west", "random_forest", train_n=60000, train_accuracy=0.982,
        holdout_n=4000, holdout_accuracy=0.957, holdout_set="clips-holdout-west-b",
        claimed_accuracy=0.95, logged_at="2024-09-16T08:20:00+01:00",
        notes="forest of 300 trees; family has no bound"),
]


def frame(rows) -> pd.DataFrame:
    df = pd.DataFrame(rows, columns=COLUMNS)
    for c in INT_COLUMNS:
        df[c] = df[c].astype("Int64")
    for c in FLOAT_COLUMNS:
        df[c] = df[c].astype("Float64")
    for c in set(COLUMNS) - INT_COLUMNS - FLOAT_COLUMNS:
        df[c] = df[c].astype("string")
    return df


def drop_empty_columns(df: pd.DataFrame) -> pd.DataFrame:
    return df[[c for c in df.columns if df[c].notna().any()]]


def write_csv(df: pd.DataFrame, path: Path, sep=","):
    path.parent.mkdir(parents=True, exist_ok=True)
    df.to_csv(path, index=False, sep=sep, lineterminator="\n", na_rep="")


def arrow_table(df: pd.DataFrame) -> pa.Table:
    fields = []
    for c in df.columns:
        t = pa.int64() if c in INT_COLUMNS else pa.float64() if c in FLOAT_COLUMNS else pa.string()
        fields.append(pa.field(c, t, nullable=True))
    table = pa.Table.from_pandas(df, schema=pa.schema(fields), preserve_index=False)
    return table.replace_schema_metadata(None)


def records(df: pd.DataFrame):
    out = []
    for rec in df.to_dict(orient="records"):
        clean = {}
        for k, v in rec.items():
            if v is pd.NA or v is None or (isinstance(v, float) and math.isnan(v)):
                clean[k] = None
            elif k in INT_COLUMNS:
                clean[k] = int(v)
            elif k in FLOAT_COLUMNS:
                clean[k] = float(v)
            else:
                clean[k] = str(v)
        out.append(clean)
    return out


def reference(path: Path, source: str, **settings) -> pd.DataFrame:
    return ref.audit(ref.read_runs(str(path)), source, **settings)


def write_expected(result: pd.DataFrame, path: Path):
    result.to_csv(path, index=False, lineterminator="\n", na_rep="")


# ---------------------------------------------------------------------------
def make_demo():
    df = frame(DEMO)
    write_csv(df, FIX / "demo" / "runs.csv")
    fmt = FIX / "formats"
    fmt.mkdir(parents=True, exist_ok=True)
    write_csv(df, fmt / "runs.tsv", sep="\t")
    table = arrow_table(df)
    pq.write_table(table, fmt / "runs.parquet")
    with ipc.new_file(str(fmt / "runs.arrow"), table.schema) as w:
        w.write_table(table)
    recs = records(df)
    (fmt / "runs.jsonl").write_text("".join(json.dumps(r) + "\n" for r in recs))
    (fmt / "runs.json").write_text(json.dumps(recs, indent=1) + "\n")

    # --same-holdout declares one shared split: the demo's runs with their split
    # names left out (with the names, several splits contradict the flag, an error).
    one_split = df.copy()
    one_split["holdout_set"] = ""
    write_csv(one_split, FIX / "demo" / "runs_one_split.csv")

    src = "fixtures/demo/runs.csv"
    variants = {
        "expected.csv": {},
        "expected_hoeffding.csv": {"holdout_bound": "hoeffding"},
        "expected_familywise.csv": {"familywise": True},
        "expected_same_holdout.csv": {"same_holdout": True},
    }
    results = {}
    for name, settings in variants.items():
        if name == "expected_same_holdout.csv":
            results[name] = reference(
                FIX / "demo" / "runs_one_split.csv", "fixtures/demo/runs_one_split.csv", **settings
            )
        else:
            results[name] = reference(FIX / "demo" / "runs.csv", src, **settings)
        write_expected(results[name], FIX / "demo" / name)
        fw = results[name]["claim_error_rate"].notna().sum() if settings.get("familywise") else 1
        check_margins(results[name], name, delta=0.05 / fw)

    # Every format must read back to the same audit.
    base = results["expected.csv"].drop(columns="source")
    for f in ["runs.tsv", "runs.parquet", "runs.jsonl", "runs.json", "runs.arrow"]:
        other = reference(fmt / f, src).drop(columns="source")
        pd.testing.assert_frame_equal(base, other, check_dtype=False)
    return results["expected.csv"]


# ---------------------------------------------------------------------------
# Independent arithmetic: mpmath at 40 digits, exact integers, no scipy.
# ---------------------------------------------------------------------------
mp = mpmath.mp
mp.dps = 40


def mp_binom_cdf(k: int, n: int, p) -> "mpmath.mpf":
    """P[Bin(n, p) <= k], summed exactly term by term."""
    if k < 0:
        return mp.mpf(0)
    if k >= n:
        return mp.mpf(1)
    q = 1 - p
    term = q ** n
    total = term
    for i in range(1, k + 1):
        term = term * (n - i + 1) / i * p / q
        total += term
    return total


def mp_solve_cdf(j: int, n: int, target) -> "mpmath.mpf":
    """The p in (0, 1) with P[Bin(n, p) <= j] = target (decreasing in p): bisection, then Newton."""
    lo, hi = mp.mpf(0), mp.mpf(1)
    for _ in range(40):
        mid = (lo + hi) / 2
        lo, hi = (mid, hi) if mp_binom_cdf(j, n, mid) > target else (lo, mid)
    p = (lo + hi) / 2
    for _ in range(8):  # d/dp P[Bin(n,p) <= j] = -n * C(n-1, j) p^j (1-p)^(n-1-j)
        slope = -n * mp.binomial(n - 1, j) * p ** j * (1 - p) ** (n - 1 - j)
        p = p - (mp_binom_cdf(j, n, p) - target) / slope
    return p


def mp_upper(k, n, alpha):
    return mp.mpf(1) if k >= n else mp_solve_cdf(k, n, alpha)


def mp_lower(k, n, alpha):
    return mp.mpf(0) if k <= 0 else mp_solve_cdf(k - 1, n, 1 - alpha)


def exact_growth(family: str, p: dict, n: int) -> int:
    """m_H(n) as an exact integer (SPEC §5), by direct summation."""
    def sauer(m, d):
        return sum(math.comb(m, i) for i in range(0, min(d, m) + 1))
    if family == "ray":
        return n + 1
    if family == "interval":
        return n * (n + 1) // 2 + 1
    if family == "linear":
        return 2 * sum(math.comb(n - 1, i) for i in range(0, p["dim"] + 1))
    if family == "box":
        return sauer(n, 2 * p["dim"])
    if family == "stump":
        return min(2 ** n, 2 + p["features"] * (2 * n - 2))
    if family == "finite":
        return min(p["size"], 2 ** n)
    if family == "tree":
        bits = 2 * p["leaves"] * math.ceil(mp.log(p["features"] + 3, 2) - mp.mpf(10) ** -30)
        return min(2 ** n, 2 ** bits)
    if family == "vc":
        return sauer(n, p["vc_dim"])
    if family in ("relu_net", "threshold_net"):
        W, L, U = p["weights"], p["layers"], p["units"]
        if family == "relu_net":
            d = mp.floor(L + L * W * mp.log(4 * mp.e * L * U * mp.log(2 * mp.e * L * U, 2), 2))
        else:
            d = mp.floor(L + W * mp.log(4 * mp.e * U * mp.log(2 * mp.e * U, 2), 2))
        return sauer(n, int(d))
    raise KeyError(family)


def mp_allowance(ln_m, N, delta):
    return mp.sqrt(mp.mpf(8) / N * (mp.log(4) + ln_m - mp.log(delta)))


def mp_train_needed(family, p, tol, delta):
    def ok(N):
        return mp_allowance(mp.log(exact_growth(family, p, 2 * N)), N, delta) <= tol
    hi = 1
    while not ok(hi):
        hi *= 2
    lo = hi // 2
    while hi - lo > 1:
        mid = (lo + hi) // 2
        lo, hi = (lo, mid) if ok(mid) else (mid, hi)
    return hi


def mp_holdout_needed(rate_double: float, claim, alpha):
    """Smallest n with upper(ceil(rate n), n) <= claim, by scanning every n.

    upper(k, n) <= c  <=>  P[Bin(n, c) <= k] <= alpha (the tail falls in p), so each
    step is one exact tail sum. k = ceil(rate * n) uses the double product, as the tools do.
    """
    n = 0
    while True:
        n += 1
        k = math.ceil(rate_double * n)
        if k < n and mp_binom_cdf(k, n, claim) <= alpha:
            return n


def mp_audit(row: dict, K: int, delta=1 - mp.mpf("0.95"), tol=mp.mpf("0.05"),
             max_width=mp.mpf("0.1"), theory=True, needed=True) -> dict:
    """SPEC §4 for one run with counts logged, at 40 digits. `row` holds Python numbers."""
    n, k = row["holdout_n"], row["holdout_misclassified"]
    rate_double = row.get("holdout_error_rate") or k / n
    rate = mp.mpf(row["holdout_error_rate"]) if row.get("holdout_error_rate") is not None \
        else mp.mpf(k) / n
    e_in = mp.mpf(row["train_error_rate"])  # the double as logged, exactly
    N = row["train_n"]
    # Decimal complements, as gapcert takes them (src/ingest/decimal.rs): the accuracy's
    # shortest decimal (repr), not its binary value.
    claim = (1 - mp.mpf(repr(row["claimed_accuracy"]))
             if row.get("claimed_accuracy") is not None else None)
    alpha = delta / K
    w2 = mp.sqrt(mp.log(2 * K / delta) / (2 * n))
    w1 = mp.sqrt(mp.log(K / delta) / (2 * n))
    out = {
        "selection_k": K, "delta": alpha,
        "hoeffding_interval_lo": max(mp.mpf(0), rate - w2),
        "hoeffding_interval_hi": min(mp.mpf(1), rate + w2),
        "binomial_interval_lo": mp_lower(k, n, alpha / 2),
        "binomial_interval_hi": mp_upper(k, n, alpha / 2),
        "error_upper_bound": mp_upper(k, n, alpha),
        "error_lower_bound": mp_lower(k, n, alpha),
        "hoeffding_one_sided_width": w1, "hoeffding_two_sided_width": w2,
    }
    U, L = out["error_upper_bound"], out["error_lower_bound"]
    out["observed_gap"] = rate - e_in
    out["certified_gap_max"] = U - e_in
    out["claim_error_rate"] = claim
    if claim is None:
        out["verdict"] = "no_claim"
    else:
        out["verdict"] = "certified" if U <= claim else "refuted" if L > claim else "unproven"
    findings = []
    if K > 1:
        findings.append("holdout_reused")
    if out["binomial_interval_hi"] - out["binomial_interval_lo"] > max_width:
        findings.append("holdout_small")
    if theory:
        fam, p = row["family"], row["params"]
        m = exact_growth(fam, p, 2 * N)
        out["growth_exact"] = m
        out["growth_ln"] = mp.log(m)
        out["vc_allowance"] = mp_allowance(out["growth_ln"], N, delta)
        out["vc_bound"] = min(mp.mpf(1), e_in + out["vc_allowance"])
        if L - e_in > out["vc_allowance"]:
            findings.append("gap_beyond_theory")
    if U < e_in - mp.sqrt(mp.log(1 / delta) / (2 * N)):
        findings.append("holdout_easier_than_train")
    if theory and e_in + out["vc_allowance"] >= 1:
        findings.append("theory_vacuous")
    if not theory:
        findings.append("theory_unavailable")
    out["findings"] = findings
    if theory and needed:
        out["train_needed"] = mp_train_needed(row["family"], row["params"], tol, delta)
    out["holdout_needed"] = None
    if needed and out["verdict"] == "unproven" and rate_double < claim:
        out["holdout_needed"] = mp_holdout_needed(rate_double, claim, alpha)
    return out


def as_int(v):
    return None if v is pd.NA or v is None or (isinstance(v, float) and math.isnan(v)) else int(v)


def cross_check_demo(expected: pd.DataFrame):
    """Recompute the demo at 40 digits where affordable; check the float reference to 1e-12,
    and check that no verdict or finding sits within 1e-9 of its threshold (so a faithful
    implementation cannot flip it by rounding)."""
    demo = {r["run"]: r for r in DEMO}
    worst = 0.0
    for _, e in expected.iterrows():
        src = demo[e["run"]]
        fam = e["family"] if e["family"] is not pd.NA else None
        known = fam in ref.FAMILY_PARAMS
        params = {c: src[c] for c in ref.PARAM_COLUMNS if src[c] is not None}
        d = ref.family_vc_dim(fam, tuple(sorted(params.items()))) if known else None
        cheap = known and (d is None or d <= 3000 or d >= 4 * int(e["train_n"]))
        row = dict(holdout_n=int(e["holdout_n"]), holdout_misclassified=int(e["holdout_misclassified"]),
                   holdout_error_rate=float(e["holdout_error_rate"]),
                   train_error_rate=float(e["train_error_rate"]), train_n=int(e["train_n"]),
                   claimed_accuracy=(None if pd.isna(e["claim_error_rate"])
                                     else float(src["claimed_accuracy"])),
                   family=fam, params=params)
        small_needed = pd.isna(e["holdout_needed"]) or int(e["holdout_needed"]) < 3000
        m = mp_audit(row, int(e["selection_k"]), theory=cheap, needed=small_needed)
        for f in ["delta", "hoeffding_interval_lo", "hoeffding_interval_hi", "binomial_interval_lo",
                  "binomial_interval_hi", "error_upper_bound", "error_lower_bound",
                  "observed_gap", "certified_gap_max"] + (
                      ["growth_ln", "vc_allowance", "vc_bound"] if cheap else []):
            a, b = float(e[f]), m[f]
            rel = abs(a - b) / max(abs(b), mp.mpf(1e-300))
            worst = max(worst, float(rel))
            assert rel < 1e-12, (e["run"], f, a, b)
        assert m["verdict"] == e["verdict"], e["run"]
        if cheap:
            codes = set(e["findings"].split(";")) if isinstance(e["findings"], str) and e["findings"] else set()
            assert set(m["findings"]) == codes - {"misclassified_derived"}, (e["run"], m["findings"], codes)
            tn = m.get("train_needed")
            if tn is not None:
                assert tn == int(e["train_needed"]), (e["run"], tn, e["train_needed"])
        if small_needed and m["holdout_needed"] is not None:
            assert m["holdout_needed"] == int(e["holdout_needed"]), e["run"]
        # distance from every decision threshold
        U, L, c = m["error_upper_bound"], m["error_lower_bound"], m["claim_error_rate"]
        margins = [m["binomial_interval_hi"] - m["binomial_interval_lo"] - mp.mpf("0.1")]
        if c is not None:
            margins += [U - c, L - c]
        e_in, N = mp.mpf(row["train_error_rate"]), row["train_n"]
        margins.append(U - (e_in - mp.sqrt(mp.log(20) / (2 * N))))
        if not pd.isna(e["vc_allowance"]):
            om = mp.mpf(float(e["vc_allowance"]))
            margins += [L - e_in - om, e_in + om - 1]
        if not pd.isna(e["holdout_misclassified"]):
            x = row["holdout_error_rate"] * row["holdout_n"]
            margins.append(abs(x - math.floor(x)) - 0.5)  # derived count not a rounding tie
        assert min(abs(x) for x in margins) > 1e-9, (e["run"], margins)
    print(f"demo cross-check with mpmath: worst relative difference {worst:.2e}")


def check_integer_robustness(expected: pd.DataFrame, path: Path):
    """holdout_needed / train_needed must not depend on float-level readings of ceil()."""
    df = ref.read_runs(str(path))
    for _, e in expected.iterrows():
        if not pd.isna(e["holdout_needed"]):
            rate, c, a = float(e["holdout_error_rate"]), float(e["claim_error_rate"]), float(e["delta"])
            lit = ref.holdout_needed_binomial(rate, c, a)
            # the same search with k = ceil(rate*n - 1e-9) instead of the literal ceil
            ns = np.arange(max(1, lit - 3000), lit + 1)
            ks = np.ceil(rate * ns - 1e-9)
            ok = ref.binomial_upper(ks, ns, a) <= c
            assert int(ns[np.argmax(ok)]) == lit or lit - 3000 > 1 and not ok[0], e["run"]
        if not pd.isna(e["train_needed"]):
            src = next(r for r in DEMO if r["run"] == e["run"])
            fam = e["family"]
            p = tuple((k, src[k]) for k in ref.FAMILY_PARAMS[fam])
            N = int(e["train_needed"])
            for x in (N - 1, N):
                om = ref.vc_allowance(fam, p, x, 0.05)
                assert abs(om - 0.05) > 1e-11 * 0.05, (e["run"], x, om)


def check_margins(res: pd.DataFrame, name: str, delta=0.05, max_width=0.10, eps=1e-9):
    """No verdict or finding of an expected file may sit within eps of its threshold."""
    for _, e in res.iterrows():
        m = [e["binomial_interval_hi"] - e["binomial_interval_lo"] - max_width]
        if not pd.isna(e["claim_error_rate"]):
            m += [e["error_upper_bound"] - e["claim_error_rate"], e["error_lower_bound"] - e["claim_error_rate"]]
        if not pd.isna(e["train_error_rate"]):
            m.append(e["error_upper_bound"] - e["train_error_rate"]
                     + math.sqrt(math.log(1 / delta) / (2 * e["train_n"])))
        if not pd.isna(e["vc_allowance"]):
            m += [e["error_lower_bound"] - e["train_error_rate"] - e["vc_allowance"],
                  e["train_error_rate"] + e["vc_allowance"] - 1]
        if "misclassified_derived" in str(e["findings"]):
            x = e["holdout_error_rate"] * e["holdout_n"]
            m.append(abs(x - math.floor(x) - 0.5))
        assert min(abs(v) for v in m) > eps, (name, e["run"], m)


# ---------------------------------------------------------------------------
# Bad inputs: each problem at a known (file, 1-based data row, column).
# ---------------------------------------------------------------------------
BAD_HEADER = ["run", "family", "dim", "train_n", "train_error_rate", "holdout_n",
              "holdout_error_rate", "holdout_accuracy", "holdout_misclassified",
              "holdout_set", "candidates", "claimed_accuracy"]
GOOD = [  # four valid rows; the bad files change single cells of them
    ["bx-1", "linear", "4", "5000", "0.08", "1200", "0.09", "", "", "split-q", "", "0.88"],
    ["bx-2", "linear", "4", "5000", "0.07", "1200", "", "0.915", "", "split-q", "", "0.90"],
    ["bx-3", "vc", "", "5000", "0.11", "1200", "", "", "130", "split-q", "", ""],
    ["bx-4", "stump", "", "5000", "0.15", "800", "0.16", "", "", "split-r", "2", "0.80"],
]
# stump needs `features` and vc needs `vc_dim`: give them columns of their own
BAD_HEADER += ["vc_dim", "features"]
GOOD = [r + ["", ""] for r in GOOD]
GOOD[2][-2] = "20"
GOOD[3][-1] = "10"

# (file, [(row, column, new value, problem)]) ; rows are 1-based data rows
BAD_CELLS = [
    ("rate_above_one.csv", [(3, "holdout_error_rate", "1.7", "holdout_error_rate = 1.7 is outside [0, 1]")]),
    ("nan_inf.csv", [(1, "holdout_error_rate", "NaN", "holdout_error_rate = NaN is not a number"),
                     (4, "train_error_rate", "inf", "train_error_rate = inf is not finite")]),
    ("non_numeric_n.csv", [(2, "holdout_n", "twelve hundred", "holdout_n = `twelve hundred` is not an integer")]),
    ("zero_negative_counts.csv", [(1, "holdout_n", "0", "holdout_n = 0 must be >= 1"),
                                  (3, "train_n", "-500", "train_n = -500 must be >= 1"),
                                  (4, "candidates", "-2", "candidates = -2 must be >= 1")]),
    ("misclassified_gt_n.csv", [(2, "holdout_misclassified", "1300",
                                 "holdout_misclassified = 1300 > holdout_n = 1200")]),
    ("accuracy_rate_conflict.csv", [(1, "holdout_accuracy", "0.90",
                                     "holdout_error_rate 0.09 + holdout_accuracy 0.90 = 0.99, not 1 within 1e-6")]),
    ("linear_without_dim.csv", [(2, "dim", "", "family `linear` needs dim (missing)")]),
    ("several_bad_rows.csv", [(1, "holdout_error_rate", "1.3", "holdout_error_rate = 1.3 is outside [0, 1]"),
                              (2, "dim", "0", "family `linear` needs dim >= 1 (got 0)"),
                              (3, "holdout_misclassified", "1250", "holdout_misclassified = 1250 > holdout_n = 1200"),
                              (4, "holdout_n", "eight hundred", "holdout_n = `eight hundred` is not an integer")]),
]


def csv_text(header, rows, eol="\n"):
    def cell(v):
        return f'"{v}"' if ("," in v or '"' in v) else v
    return "".join(",".join(cell(v) for v in r) + eol for r in [header] + rows)


def make_bad():
    bad = FIX / "bad"
    bad.mkdir(parents=True, exist_ok=True)
    table = []
    # sanity: the unmodified rows are valid for the reference
    (bad / "_good.tmp.csv").write_text(csv_text(BAD_HEADER, GOOD))
    ref.audit(ref.read_runs(str(bad / "_good.tmp.csv")), "good")
    (bad / "_good.tmp.csv").unlink()
    for name, cells in BAD_CELLS:
        rows = [list(r) for r in GOOD]
        for row, col, value, problem in cells:
            rows[row - 1][BAD_HEADER.index(col)] = value
            table.append((name, str(row), col, problem))
        (bad / name).write_text(csv_text(BAD_HEADER, rows))

    def without(col):
        i = BAD_HEADER.index(col)
        return [c for j, c in enumerate(BAD_HEADER) if j != i], [[c for j, c in enumerate(r) if j != i] for r in GOOD]
    h, r = without("holdout_n")
    (bad / "missing_holdout_n.csv").write_text(csv_text(h, r))
    table.append(("missing_holdout_n.csv", "—", "holdout_n", "required column holdout_n is missing"))
    h = [c for c in BAD_HEADER if c not in ("holdout_error_rate", "holdout_accuracy", "holdout_misclassified")]
    r = [[v for c, v in zip(BAD_HEADER, row) if c in h] for row in GOOD]
    (bad / "no_holdout_error.csv").write_text(csv_text(h, r))
    table.append(("no_holdout_error.csv", "—", "holdout_error_rate / holdout_accuracy / holdout_misclassified",
                  "no held-out error column at all"))

    recs = [{k: (json.loads(v) if v and k not in ("run", "family", "holdout_set") else (v or None))
             for k, v in zip(BAD_HEADER, row)} for row in GOOD]
    lines = [json.dumps(x) for x in recs]
    lines[-1] = lines[-1][: len(lines[-1]) // 2]  # cut the last record in the middle
    (bad / "truncated.jsonl").write_text("\n".join(lines))
    table.append(("truncated.jsonl", "4", "—", "line 4 is not complete JSON (file cut mid-record)"))
    text = json.dumps(recs, indent=1)
    (bad / "truncated_array.json").write_text(text[: int(len(text) * 0.7)])
    table.append(("truncated_array.json", "—", "—", "JSON array is cut off (unexpected end of input)"))
    rng = random.Random(20240917)
    (bad / "garbage.parquet").write_bytes(bytes(rng.randrange(256) for _ in range(512)))
    table.append(("garbage.parquet", "—", "—", "not a Parquet file (512 random bytes, seed 20240917)"))
    (bad / "empty.csv").write_bytes(b"")
    table.append(("empty.csv", "—", "—", "file is empty (0 bytes): no header, no runs"))
    (bad / "header_only.csv").write_text(",".join(BAD_HEADER) + "\n")
    table.append(("header_only.csv", "—", "—", "header but no runs"))

    md = ["# Bad inputs (invented data)", "",
          "Each file holds the four valid runs below with the listed cells changed, or is",
          "broken as a whole. Rows are 1-based data rows (the header is not counted; for",
          "`.jsonl` the line number, which is the record number). `—` means the problem",
          "concerns the whole file. gapcert must report every listed problem of a file in one",
          "run (not only the first) with file, row and column, exit with code 2 and write no",
          "output file; with `--lenient` the bad rows are skipped and listed instead",
          "(whole-file problems still fail). Generated by `scripts/make_fixtures.py`.", "",
          "| file | row | column | problem |", "|---|---|---|---|"]
    md += [f"| `{f}` | {r} | {c} | {p} |" for f, r, c, p in table]
    md += ["", "Notes on the reading of SPEC §3 these files assume:", "",
           "* `NaN`, `inf` are rejected in any numeric column (a rate must be a finite number in [0, 1]).",
           "* Counts (`holdout_n`, `train_n`, `candidates`, parameters) must be integers >= 1;"
           " `holdout_misclassified` must be an integer in [0, holdout_n].",
           "* `linear_without_dim.csv`: the `dim` column exists but is empty in row 2;"
           " a missing column counts the same.",
           "* `zero_negative_counts.csv` has three problems in three rows; `nan_inf.csv` two;"
           " `several_bad_rows.csv` four distinct problems in rows 1–4 (all four must be listed).",
           "* `header_only.csv` and `empty.csv`: an audit with no runs is an input error (exit 2)"
           " — the natural reading of \"never silently drops\"; the Rust side may choose to"
           " report 0 runs instead, but must then say so in its README.", "",
           "The valid base rows:", "", "```", csv_text(BAD_HEADER, GOOD).rstrip(), "```", ""]
    (bad / "README.md").write_text("\n".join(md))
    return table


# ---------------------------------------------------------------------------
# Good edge cases: the same four runs written in awkward but valid ways.
# ---------------------------------------------------------------------------
EDGE_HEADER = ["run", "family", "dim", "features", "train_n", "train_error_rate", "holdout_n",
               "holdout_error_rate", "holdout_set", "claimed_accuracy"]
EDGE = [
    ["ed-lin3", "linear", "3", "", "20000", "0.125", "1500", "0.13", "edge-split-e", "0.85"],
    ["ed-stump9", "stump", "", "9", "20000", "0.175", "1500", "0.18", "edge-split-e", ""],
    ["ed-lin6", "linear", "6", "", "64000", "0.0625", "2500", "0.072", "edge-split-f", "0.95"],
    ["ed-other", "svm_rbf", "", "", "64000", "0.04", "2500", "0.05", "", "0.93"],
]


def make_edge():
    edge = FIX / "edge"
    (edge / "mixed").mkdir(parents=True, exist_ok=True)
    canonical = csv_text(EDGE_HEADER, EDGE)
    (edge / "bom_crlf.csv").write_bytes(b"\xef\xbb\xbf" + csv_text(EDGE_HEADER, EDGE, "\r\n").encode())
    shouty = ["Run", "FAMILY", "Dim", "Features", "TRAIN_N", "Train_Error_Rate", "HOLDOUT_N",
              "Holdout_Error_Rate", "HoldOut_Set", "Claimed_Accuracy"]
    (edge / "mixed_case.csv").write_text(csv_text(shouty, EDGE))
    renamed = ["run", "family", "dim", "features", "train_n", "train_error_rate", "n_val",
               "val_err", "holdout_set", "claimed_accuracy"]
    (edge / "renamed.csv").write_text(csv_text(renamed, EDGE))
    (edge / "map.json").write_text(json.dumps({"holdout_error_rate": "val_err", "holdout_n": "n_val"}, indent=1) + "\n")
    pct_cols = {"train_error_rate", "holdout_error_rate", "claimed_accuracy"}

    def pct(c, v):
        return v if c not in pct_cols or v == "" else format(float(Fraction(v) * 100), "g")
    (edge / "percent.csv").write_text(csv_text(EDGE_HEADER, [[pct(c, v) for c, v in zip(EDGE_HEADER, r)] for r in EDGE]))
    tmp = edge / "_canonical.tmp.csv"
    tmp.write_text(canonical)
    res = reference(tmp, "fixtures/edge/bom_crlf.csv")
    write_expected(res, edge / "expected.csv")
    check_margins(res, "edge")
    tmp.unlink()
    # the reference reads each awkward file itself too (BOM, case; the others after renaming)
    for f in ["bom_crlf.csv", "mixed_case.csv"]:
        other = reference(edge / f, "fixtures/edge/bom_crlf.csv")
        pd.testing.assert_frame_equal(res, other, check_dtype=False)

    # a folder: one .csv and one .jsonl sharing split `edge-split-m` across files, plus a README.txt
    a = [["mx-a1", "vc", "", "", "12000", "0.1", "900", "0.11", "edge-split-m", "0.85"],
         ["mx-a2", "interval", "", "", "12000", "0.3", "900", "0.31", "edge-split-n", ""]]
    hdr = EDGE_HEADER[:2] + ["vc_dim"] + EDGE_HEADER[3:]
    a[0][2] = "15"
    (edge / "mixed" / "a.csv").write_text(csv_text(hdr, a))
    b = [{"run": "mx-b1", "family": "ray", "train_n": 12000, "train_error_rate": 0.2,
          "holdout_n": 900, "holdout_misclassified": 171, "holdout_set": "edge-split-m",
          "claimed_accuracy": 0.75},
         {"run": "mx-b2", "family": "box", "dim": 2, "train_n": 12000, "train_accuracy": 0.82,
          "holdout_n": 900, "holdout_accuracy": 0.81, "holdout_set": None, "claimed_accuracy": None}]
    (edge / "mixed" / "b.jsonl").write_text("".join(json.dumps(x) + "\n" for x in b))
    (edge / "mixed" / "README.txt").write_text(
        "Invented data. This text file is not a run log: an audit of this folder must skip it\n"
        "and count it as skipped (1 file). The runs in a.csv and b.jsonl are audited together;\n"
        "mx-a1 and mx-b1 share the split edge-split-m, so K = 2 for both.\n")
    both = pd.concat([ref.read_runs(str(edge / "mixed" / "a.csv")),
                      ref.read_runs(str(edge / "mixed" / "b.jsonl"))], ignore_index=True)
    res_m = ref.audit(both, "fixtures/edge/mixed")
    res_m["source"] = ["fixtures/edge/mixed/a.csv:1", "fixtures/edge/mixed/a.csv:2",
                       "fixtures/edge/mixed/b.jsonl:1", "fixtures/edge/mixed/b.jsonl:2"]
    write_expected(res_m, edge / "expected_mixed.csv")
    check_margins(res_m, "edge mixed")
    (edge / "README.md").write_text("""# Good edge cases (invented data)

Every file here is valid and must be audited without problems. Generated by
`scripts/make_fixtures.py`.

| file | what is awkward | how to audit | expected |
|---|---|---|---|
| `bom_crlf.csv` | UTF-8 byte-order mark, CRLF line ends | `gapcert audit fixtures/edge/bom_crlf.csv` | `expected.csv` |
| `mixed_case.csv` | column names in upper/mixed case (`HOLDOUT_N`, `Train_Error_Rate`, ...) | as is | `expected.csv` |
| `renamed.csv` + `map.json` | held-out columns called `val_err`, `n_val` | `--map-file fixtures/edge/map.json` (or `--map holdout_error_rate=val_err --map holdout_n=n_val`) | `expected.csv` |
| `percent.csv` | rates and claims on a 0–100 scale | `--percent` | `expected.csv` (to 1e-9; a percentage p is read as p / 100) |
| `mixed/` | folder with `a.csv`, `b.jsonl` and `README.txt` | `gapcert audit fixtures/edge/mixed` | `expected_mixed.csv`; 1 file skipped (`README.txt`) |

`expected.csv` is the output of `benches/reference_audit.py` (confidence 0.95,
binomial) on the four runs; the `source` column is written for `bom_crlf.csv`.
All four files describe the same runs, so only `source` may differ. In `mixed/`,
runs `mx-a1` (in `a.csv`) and `mx-b1` (in `b.jsonl`) share the split
`edge-split-m`, so grouping must work across files: K = 2 for both. `ed-other`
has an unknown family (`svm_rbf`) and no `holdout_set`.
""")


# ---------------------------------------------------------------------------
# Worked example: three runs, every number at 40 digits with mpmath.
# ---------------------------------------------------------------------------
WORKED_HEADER = ["run", "family", "dim", "features", "train_n", "train_error_rate",
                 "holdout_n", "holdout_misclassified", "holdout_set", "claimed_accuracy"]
WORKED = [
    ["wk-plane", "linear", "2", "", "4000", "0.12", "500", "68", "wk-split-a", "0.85"],
    ["wk-stump", "stump", "", "5", "4000", "0.09", "500", "41", "wk-split-a", "0.88"],
    ["wk-ray", "ray", "", "", "2500", "0.22", "800", "200", "wk-split-b", "0.8"],
]
NUMERIC_FIELDS = ["delta", "hoeffding_interval_lo", "hoeffding_interval_hi",
                  "binomial_interval_lo", "binomial_interval_hi", "error_upper_bound",
                  "error_lower_bound", "growth_ln", "vc_allowance", "vc_bound", "observed_gap",
                  "certified_gap_max", "claim_error_rate"]


def fmt(x, digits=12):
    return mpmath.nstr(x, digits, strip_zeros=False)


def make_worked():
    wk = FIX / "worked"
    wk.mkdir(parents=True, exist_ok=True)
    (wk / "runs.csv").write_text(csv_text(WORKED_HEADER, WORKED))
    split_sizes = {}
    for r in WORKED:
        split_sizes[r[8]] = split_sizes.get(r[8], 0) + 1
    runs, text = [], []
    for r in WORKED:
        d = dict(zip(WORKED_HEADER, r))
        params = {"dim": int(d["dim"])} if d["dim"] else {"features": int(d["features"])} if d["features"] else {}
        row = dict(holdout_n=int(d["holdout_n"]), holdout_misclassified=int(d["holdout_misclassified"]),
                   train_error_rate=float(d["train_error_rate"]), train_n=int(d["train_n"]),
                   claimed_accuracy=float(d["claimed_accuracy"]), family=d["family"], params=params)
        K = max(1, split_sizes[d["holdout_set"]])
        m = mp_audit(row, K)
        fam_vc = ref.family_vc_dim(d["family"], tuple(params.items()))
        rec = {"run": d["run"], "source": f"fixtures/worked/runs.csv:{WORKED.index(r) + 1}",
               "family": d["family"], "train_n": row["train_n"],
               "train_error_rate": row["train_error_rate"], "holdout_n": row["holdout_n"],
               "holdout_error_rate": row["holdout_misclassified"] / row["holdout_n"],
               "holdout_misclassified": row["holdout_misclassified"],
               "holdout_set": d["holdout_set"], "candidates": 1, "selection_k": K,
               "delta": float(m["delta"]),
               "hoeffding_interval": [float(m["hoeffding_interval_lo"]), float(m["hoeffding_interval_hi"])],
               "binomial_interval": [float(m["binomial_interval_lo"]), float(m["binomial_interval_hi"])],
               "error_upper_bound": float(m["error_upper_bound"]),
               "error_lower_bound": float(m["error_lower_bound"]),
               "vc_dim": fam_vc, "growth_ln": float(m["growth_ln"]),
               "vc_allowance": float(m["vc_allowance"]), "vc_bound": float(m["vc_bound"]),
               "observed_gap": float(m["observed_gap"]), "certified_gap_max": float(m["certified_gap_max"]),
               "claim_error_rate": float(m["claim_error_rate"]), "verdict": m["verdict"],
               "holdout_needed": m["holdout_needed"], "train_needed": m["train_needed"],
               "findings": m["findings"],
               "digits40": {f: mpmath.nstr(m[f], 40) for f in NUMERIC_FIELDS},
               "growth_exact": str(m["growth_exact"])}
        runs.append(rec)
        text.append((d, row, K, m, fam_vc, params))

    # third opinion: the float reference on the same file
    res = reference(wk / "runs.csv", "fixtures/worked/runs.csv")
    for rec, (_, e) in zip(runs, res.iterrows()):
        for f in NUMERIC_FIELDS:
            assert abs(float(e[f]) - float(rec["digits40"][f])) <= 1e-12 * max(1, abs(float(e[f]))), (rec["run"], f)
        assert e["verdict"] == rec["verdict"]
        for f in ("holdout_needed", "train_needed"):
            assert (as_int(e[f]) == rec[f]), (rec["run"], f, e[f], rec[f])
        assert set(filter(None, e["findings"].split(";"))) == set(rec["findings"]), rec["run"]

    doc = {"description": "Invented worked example: 3 runs audited at confidence 0.95 with the "
                          "binomial method, tolerance 0.05, max_width 0.10. Numbers are mpmath "
                          "(40 significant digits) rounded to the nearest double; digits40 keeps "
                          "the 40-digit strings. Independent of scipy.",
           "settings": {"confidence": 0.95, "holdout_bound": "binomial", "familywise": False,
                        "tolerance": 0.05, "max_width": 0.1},
           "runs": runs}
    (wk / "expected.json").write_text(json.dumps(doc, indent=1) + "\n")
    write_worked_readme(wk, text)


def write_worked_readme(wk, text):
    L = ["# Worked example (invented data)", "",
         "Three runs from an invented bench test: two models compared on the held-out split",
         "`wk-split-a`, one model alone on `wk-split-b`. Settings: confidence 0.95 (δ = 0.05),",
         "binomial method, tolerance 0.05, max width 0.10. `expected.json` holds every per-run",
         "field of SPEC §7, computed with mpmath at 40 significant digits (exact binomial tail",
         "sums and exact integer growth functions; scipy not used) and checked against",
         "`benches/reference_audit.py` to 1e-12. Numbers below are shown to 12 digits.", "",
         "```", csv_text(WORKED_HEADER, WORKED).rstrip(), "```", ""]
    for d, row, K, m, vc, params in text:
        n, k, N = row["holdout_n"], row["holdout_misclassified"], row["train_n"]
        e_in = d["train_error_rate"]
        fam = d["family"]
        L += [f"## {d['run']} ({fam}{', ' + ', '.join(f'{a} = {b}' for a, b in params.items()) if params else ''})", ""]
        share = sum(1 for r in WORKED if r[8] == d["holdout_set"])
        L += [f"**Selection.** {share} run(s) in this audit share `{d['holdout_set']}` and `candidates` is empty (1),",
              f"so K = max(1, {share}) = {K} and every held-out bound uses α = δ/K = 0.05/{K} = {fmt(m['delta'])}.", "",
              f"**Observed.** ê = k/n = {k}/{n} = {fmt(mp.mpf(k) / n)}; E_in = {e_in}; "
              f"c = 1 − {d['claimed_accuracy']} = {fmt(m['claim_error_rate'])}.", "",
              "**Hoeffding, two-sided.** w2 = sqrt(ln(2K/δ) / (2n)) = "
              f"sqrt(ln({2 * K}/0.05) / {2 * n}) = {fmt(m['hoeffding_two_sided_width'])}; interval "
              f"[max(0, ê − w2), min(1, ê + w2)] = [{fmt(m['hoeffding_interval_lo'])}, {fmt(m['hoeffding_interval_hi'])}].", "",
              f"**Exact binomial (Clopper–Pearson), two-sided at α/2 = {fmt(m['delta'] / 2)} each end.** "
              f"lower = BetaInv(α/2; k, n−k+1) = BetaInv({fmt(m['delta'] / 2, 6)}; {k}, {n - k + 1}) = {fmt(m['binomial_interval_lo'])}, "
              f"i.e. the p with P[Bin({n}, p) ≥ {k}] = α/2; upper = BetaInv(1 − α/2; k+1, n−k) = "
              f"BetaInv({fmt(1 - m['delta'] / 2, 6)}; {k + 1}, {n - k}) = {fmt(m['binomial_interval_hi'])}, "
              f"the p with P[Bin({n}, p) ≤ {k}] = α/2. "
              f"Width {fmt(m['binomial_interval_hi'] - m['binomial_interval_lo'], 6)} "
              f"{'>' if 'holdout_small' in m['findings'] else '≤'} 0.10.", "",
              f"**One-sided bounds at α = {fmt(m['delta'], 6)}.** U = BetaInv(1 − α; {k + 1}, {n - k}) = {fmt(m['error_upper_bound'])}; "
              f"L = BetaInv(α; {k}, {n - k + 1}) = {fmt(m['error_lower_bound'])}.", ""]
        c = m["claim_error_rate"]
        U, Lb = m["error_upper_bound"], m["error_lower_bound"]
        why = (f"U = {fmt(U, 6)} ≤ c = {fmt(c, 6)}" if m["verdict"] == "certified" else
               f"L = {fmt(Lb, 6)} > c = {fmt(c, 6)}" if m["verdict"] == "refuted" else
               f"L = {fmt(Lb, 6)} ≤ c = {fmt(c, 6)} < U = {fmt(U, 6)}")
        L += [f"**Verdict: {m['verdict']}**, because {why}.", ""]
        if fam == "linear":
            g = f"2·Σ_(i=0..{params['dim']}) C({2 * N - 1}, i)"
        elif fam == "stump":
            g = f"min(2^{2 * N}, 2 + {params['features']}·(2·{2 * N} − 2))"
        else:
            g = f"{2 * N} + 1"
        L += [f"**Theory.** m_H(2N) = m_H({2 * N}) = {g} = {m['growth_exact']}, so growth_ln = ln m_H(2N) = {fmt(m['growth_ln'])} "
              f"(d_VC = {vc if vc is not None else 'none given by SPEC (null)'}). "
              f"Ω = sqrt((8/N)·ln(4·m_H(2N)/δ)) = sqrt((8/{N})·(ln 4 + {fmt(m['growth_ln'], 8)} − ln 0.05)) = {fmt(m['vc_allowance'])}; "
              f"vc_bound = min(1, {e_in} + Ω) = {fmt(m['vc_bound'])}. Ω uses δ = 0.05, not δ/K.", "",
              f"**Gaps.** observed_gap = ê − E_in = {fmt(m['observed_gap'])}; certified_gap_max = U − E_in = {fmt(m['certified_gap_max'])}.", ""]
        checks = [f"holdout_reused: K = {K} {'> 1 (yes)' if K > 1 else '= 1 (no)'}",
                  f"gap_beyond_theory: L − E_in = {fmt(Lb - mp.mpf(e_in), 6)} vs Ω = {fmt(m['vc_allowance'], 6)} "
                  f"({'yes' if 'gap_beyond_theory' in m['findings'] else 'no'})",
                  f"holdout_easier_than_train: U = {fmt(U, 6)} vs E_in − sqrt(ln(1/δ)/(2N)) = "
                  f"{fmt(mp.mpf(e_in) - mp.sqrt(mp.log(20) / (2 * N)), 6)} ({'yes' if 'holdout_easier_than_train' in m['findings'] else 'no'})",
                  f"theory_vacuous: E_in + Ω = {fmt(mp.mpf(e_in) + m['vc_allowance'], 6)} ({'≥ 1, yes' if 'theory_vacuous' in m['findings'] else '< 1, no'})"]
        L += ["**Findings:** " + (", ".join(f"`{x}`" for x in m["findings"]) or "none") + ". Checks: "
              + "; ".join(checks) + ".", ""]
        if m["holdout_needed"] is not None:
            hn = m["holdout_needed"]
            kk = math.ceil(row["holdout_misclassified"] / n * hn)
            L += [f"**holdout_needed = {hn}.** The smallest n' with U(ceil(ê·n'), n', α) ≤ c. Since the "
                  "binomial tail falls as p grows, U(k', n') ≤ c exactly when P[Bin(n', c) ≤ k'] ≤ α, so "
                  f"every n' was scanned with exact tail sums: at n' = {hn}, k' = ceil({fmt(mp.mpf(k) / n, 6)}·{hn}) = {kk}, "
                  f"P[Bin({hn}, c) ≤ {kk}] = {fmt(mp_binom_cdf(kk, hn, c), 6)} ≤ α = {fmt(m['delta'], 6)}, "
                  f"and every smaller n' fails (n' = {hn - 1}: k' = {math.ceil(k / n * (hn - 1))}, "
                  f"P = {fmt(mp_binom_cdf(math.ceil(k / n * (hn - 1)), hn - 1, c), 6)}).", ""]
        else:
            L += ["**holdout_needed = null** (the run is certified or refuted).", ""]
        tn = m["train_needed"]
        om_at = mp_allowance(mp.log(exact_growth(fam, params, 2 * tn)), tn, 1 - mp.mpf("0.95"))
        om_before = mp_allowance(mp.log(exact_growth(fam, params, 2 * (tn - 1))), tn - 1, 1 - mp.mpf("0.95"))
        L += [f"**train_needed = {tn}**: Ω({tn}) = {fmt(om_at, 10)} ≤ 0.05 < Ω({tn - 1}) = {fmt(om_before, 10)} "
              "(Ω falls with N; found by bisection on exact integer growth values).", ""]
    (wk / "README.md").write_text("\n".join(L))


DEMO_README_HEAD = """# Demo logs: Kestrel Water acoustic leak detection (invented data)

**All data in this folder are invented** for gapcert's demo and tests; Kestrel Water
is a made-up utility and no real measurements are involved. Every row also says
"invented" in its `notes` column (an extra column, which gapcert ignores).

Scenario: the network-analytics team of Kestrel Water fits classifiers that flag
two-second hydrophone clips from pipe-mounted acoustic loggers as *leak* / *no leak*.
Before a rollout review they audit a sweep of 21 runs across model families. Six runs
were compared on the shared held-out split `clips-holdout-north-v2` (6000 clips) and
five on `clips-holdout-south-v1` (2400 clips; one of them, `kw-gbm-400`, was itself the
best of 20 tuning trials). The remaining runs have their own split, or none logged.
The held-out error is logged per row as a rate, an accuracy or a count (`kw-vc40-spectral`
logs all three, consistently); training error as a rate or an accuracy; `logged_at` mixes
RFC 3339 and `YYYY-MM-DD HH:MM`.

Files: `runs.csv` (the logs), `expected.csv` (reference output at the default settings:
confidence 0.95, binomial, tolerance 0.05, max width 0.10), and the same audit with
`--holdout-bound hoeffding` (`expected_hoeffding.csv`), `--familywise`
(`expected_familywise.csv`) and `--same-holdout` (`expected_same_holdout.csv`). They are
written by `benches/reference_audit.py` (pandas + scipy) and checked by
`scripts/make_fixtures.py` against an independent mpmath computation (40 digits, exact
binomial tails and exact integer growth) to 1e-12 relative; no verdict or finding in
them is within 1e-9 of its threshold. `fixtures/formats/` holds the same runs as TSV,
Parquet, JSON lines, JSON array and Arrow IPC file (nullable int64 / float64 / string
columns; empty cells are nulls); each must audit to `expected.csv` (except `source`).

## Expected verdicts and findings (confidence 0.95, binomial, defaults)

| run | family | K | ê | L | U | c | verdict | holdout_needed | findings |
|---|---|---|---|---|---|---|---|---|---|
"""

DEMO_README_TAIL = """
Summary: 13 certified, 2 unproven, 1 refuted, 5 no_claim. What the rows show:

* `kw-relu-3x80` is the one over-claim: 97 % claimed, and even the lower bound of its
  held-out error (0.0337) exceeds the claimed 3 % error: **refuted**.
* `kw-relu-pilot` is **unproven** for lack of held-out data (1 error in 40 clips): its
  two-sided interval is wider than 0.10 (`holdout_small`); 234 clips at the same error
  rate would certify the 95 % claim.
* `kw-lin24-l1` is **unproven** although its observed error is below the claim: on a
  split shared by six runs the margin is too thin; 56 776 held-out clips would be needed.
* `kw-lin8-pvc` was trained on cast-iron mains and tested on PVC mains: the lower bound of
  its held-out error exceeds its training error by more than the VC allowance
  (`gap_beyond_theory`, N = 2 000 000, d_VC = 9). Its 80 % claim is still certified by the
  held-out data.
* `kw-lin8-cast` is the same model spot-checked on 400 fresh cast-iron clips (the
  population it was trained on); it makes no claim in the log, and the release note
  (`claims.csv`) makes one about its generalization gap.
* `kw-tree-l64-east` does much better on held-out than on training data
  (`holdout_easier_than_train`): the east split shared clips with training.
* `kw-gbm-400`, `kw-forest-west` (families without a bound) and `kw-legacy-rule` (no family
  logged) get `theory_unavailable`; the neural nets get `theory_vacuous`.
* `kw-lin12-sweep` has no `holdout_set` but `candidates = 8`, so K = 8.

## Numerical notes for tests

* Compare floats with a relative tolerance of 1e-9 (`growth_ln` reaches 2.4e5).
* `train_needed` of `kw-relu-3x80` is 5 722 977 392; near that N, Ω changes by only
  ~4e-12 per unit of N, so an implementation needs ln m_H to ~1e-12 relative to match it
  exactly (the fixture is ~5e-11 relative away from the threshold). All other
  `train_needed` values are at least 1e-7 relative away from a flip.
* `delta` is the per-run level α = δ/K (after `--familywise`), with δ = 1 − 0.95 computed
  in double precision (0.050000000000000044). `selection_k` (K) is an extra column.
"""


def make_demo_readme(res: pd.DataFrame):
    lines = []
    for _, e in res.iterrows():
        def f(x, nd=4):
            return "—" if pd.isna(x) else f"{x:.{nd}f}"
        lines.append(f"| `{e['run']}` | {e['family'] if not pd.isna(e['family']) else '(none)'} | "
                     f"{e['selection_k']} | {f(e['holdout_error_rate'])} | {f(e['error_lower_bound'])} | "
                     f"{f(e['error_upper_bound'])} | {f(e['claim_error_rate'], 3)} | **{e['verdict']}** | "
                     f"{'—' if pd.isna(e['holdout_needed']) else int(e['holdout_needed'])} | "
                     f"{', '.join(e['findings'].split(';')) if isinstance(e['findings'], str) and e['findings'] else '—'} |")
    counts = res["verdict"].value_counts().to_dict()
    assert counts == {"certified": 13, "unproven": 2, "refuted": 1, "no_claim": 5}, counts
    (FIX / "demo" / "README.md").write_text(DEMO_README_HEAD + "\n".join(lines) + "\n"
                                            + DEMO_README_TAIL + READINGS)


READINGS = """
## How SPEC §4 was read (the Rust side must read it the same way)

1. **ê, k.** Per row, ê is taken from `holdout_error_rate` if present, else
   `1 − holdout_accuracy`, else `holdout_misclassified / holdout_n` (an empty cell is
   missing). k is `holdout_misclassified` if present, else `round(ê·n)` with halves rounded
   away from zero (Rust `f64::round`), and then the run gets `misclassified_derived`.
   Hoeffding uses ê, the binomial method uses k. A row that logs both a rate and an
   accuracy must have them sum to 1 within 1e-6. Training error likewise
   (rate, else 1 − accuracy, else train_misclassified / train_n).
2. **K.** K = max(candidates, rows of the whole audit (all files) with the same
   `holdout_set` string, the run included); `candidates` missing → 1. Empty or missing
   `holdout_set` → that run is not grouped (K = candidates). `--same-holdout`: every row
   shares one split, K = max(candidates, number of rows). The output `candidates` column
   is the logged value (1 when missing); K itself is the extra column `selection_k`.
3. **δ and `--familywise`.** δ = 1 − confidence. With `--familywise`, δ is replaced by
   δ/m (m = number of runs with a claim, at least 1) *everywhere*: the held-out bounds
   (α = δ/(m·K)), Ω, `train_needed`, and the `holdout_easier_than_train` threshold.
   The output field `delta` is the per-run α = δ/K actually used by the held-out bounds.
4. **Intervals.** Both two-sided intervals use level α = δ/K split as α/2 per end:
   Hoeffding half-width sqrt(ln(2K/δ)/(2n)), binomial ends BetaInv(α/2; k, n−k+1) and
   BetaInv(1−α/2; k+1, n−k). One-sided U and L use α. `holdout_small` compares the width
   of the *binomial* two-sided interval (whatever `--holdout-bound` is) with `--max-width`
   strictly (width > max_width).
5. **Findings use the chosen method's U and L** (`gap_beyond_theory`,
   `holdout_easier_than_train`), and Ω unclipped (`theory_vacuous` is E_in + Ω ≥ 1).
   `holdout_easier_than_train` needs only train_n and a training error, not a family.
6. **theory_unavailable** is raised when the family is missing or unknown, *or* when
   train_n or the training error is missing; then growth_ln, vc_allowance, vc_bound are
   null (observed_gap / certified_gap_max are null only without a training error).
   `vc_dim` and `train_needed` depend only on the family and are filled for every known
   family. `vc_dim`: ray 1, interval 2, linear d+1, box 2d, finite ⌊log2 M⌋, vc d, nets the
   d of §5 (⌊·⌋ of the float formula), stump and tree null. No listed family has an
   infinite VC dimension.
7. **holdout_needed** is null unless the verdict is `unproven` and ê < c. Binomial: the
   literally smallest n with U(ceil(ê·n), n, α) ≤ c, ceil taken of the double product
   ê·n (no epsilon); the search handles the sawtooth (the first stretch of equal k whose
   last n passes, then bisection inside it). Every demo value is the same with
   ceil(ê·n − 1e-9). Hoeffding: ceil(ln(K/δ)/(2(c−ê)²)).
8. **train_needed**: smallest N ≥ 1 with Ω(N) ≤ tolerance (Ω decreases in N for every
   §5 family; found by doubling then bisection); uses δ (not δ/K).
9. **Claims.** c = `claimed_error_rate`, else 1 − `claimed_accuracy`. No claim → verdict
   `no_claim`, `holdout_needed` null, but all bounds are still reported.
10. **Ties.** `certified` iff U ≤ c; `refuted` iff L > c; `gap_beyond_theory` iff
    L − E_in > Ω (strict). No fixture sits within 1e-9 of any of these thresholds.
"""


if __name__ == "__main__":
    print(f"python {sys.version.split()[0]}  pandas {pd.__version__}  numpy {np.__version__}  "
          f"scipy {scipy.__version__}  pyarrow {pa.__version__}  mpmath {mpmath.__version__}")
    res = make_demo()
    cross_check_demo(res)
    make_demo_readme(res)
    make_bad()
    make_edge()
    make_worked()
    check_integer_robustness(res, FIX / "demo" / "runs.csv")
    with pd.option_context("display.width", 250, "display.max_columns", 40):
        print(res[["run", "selection_k", "holdout_error_rate", "error_lower_bound",
                   "error_upper_bound", "claim_error_rate", "verdict", "vc_allowance",
                   "holdout_needed", "train_needed", "findings"]])

"""The command line: stepfence serve | describe | limit | verify | list.

Exit status 0 on success, 2 on bad input with one line on stderr naming the problem.
"""
from __future__ import annotations

import argparse
import json
import math
import sys
from pathlib import Path

import numpy as np

from .errors import InputError

CAUTION_LINE = ("caution: eigenvalue limits hold for the linear, constant-coefficient problem with "
                "a normal Jacobian; confirm with `stepfence verify` and on your own problem.")


def _add_scheme_args(p: argparse.ArgumentParser):
    p.add_argument("scheme", nargs="?", help="catalogue name: bdf4, rk4, ab3, abm4-pece, rkc10 ...")
    p.add_argument("--rho", help="rho polynomial text, e.g. 'z^2 - z'")
    p.add_argument("--sigma", help="sigma polynomial text, e.g. '3/2 z - 1/2'")
    p.add_argument("--alpha", help="alpha_0..alpha_k, e.g. '-1, 1'")
    p.add_argument("--beta", help="beta_0..beta_k, e.g. '1/2, 1/2'")
    p.add_argument("--tableau", help="Butcher tableau JSON file {A, b, c}")
    p.add_argument("--stability", help="stability function R(z), e.g. '1 + z + z^2/2'")
    p.add_argument("--json", action="store_true", help="print JSON")


def _scheme_from_args(a):
    from .specs import scheme_from_spec
    given = [x for x in ("rho", "sigma", "alpha", "beta", "tableau", "stability") if getattr(a, x)]
    if a.scheme and given:
        raise InputError("scheme", f"give a catalogue name or --{given[0]}, not both")
    if a.scheme:
        return scheme_from_spec(a.scheme)
    if a.tableau:
        path = Path(a.tableau)
        try:
            obj = json.loads(path.read_text())
        except OSError as e:
            raise InputError("--tableau", f"cannot read {path}: {e.strerror}") from None
        except json.JSONDecodeError as e:
            raise InputError("--tableau", f"{path} is not valid JSON: {e.msg}", line=e.lineno,
                             column=e.colno) from None
        return scheme_from_spec({"tableau": obj})
    spec = {x: getattr(a, x) for x in given}
    if not spec:
        raise InputError("scheme", "no scheme given", expected="a catalogue name or --rho/--sigma, "
                         "--alpha/--beta, --tableau, --stability")
    return scheme_from_spec(spec)


def _read_source(path: str, field: str) -> tuple[bytes, str]:
    if path == "-":
        return sys.stdin.buffer.read(), "stdin.txt"
    p = Path(path)
    try:
        return p.read_bytes(), p.name
    except OSError as e:
        raise InputError(field, f"cannot read {path}: {e.strerror}") from None


def _spectrum_from_args(a):
    from . import spectra
    if getattr(a, "matrix", None):
        data, name = _read_source(a.matrix, "--matrix")
        mat = spectra.read_matrix_bytes(data, name, field="--matrix")
        mass = None
        if getattr(a, "mass", None):
            mdata, mname = _read_source(a.mass, "--mass")
            mass = spectra.read_matrix_bytes(mdata, mname, field="--mass")
        return spectra.eigenvalues_of(mat, M=mass, field="--matrix"), mat
    if getattr(a, "frequencies", None):
        data, name = _read_source(a.frequencies, "--frequencies")
        vals = spectra.read_spectrum_bytes(data, name, field="--frequencies").values
        if np.any(vals.imag != 0):
            raise InputError("--frequencies", "frequencies must be real numbers")
        return spectra.from_frequencies(vals.real, unit=a.unit, field="--frequencies"), None
    eigs = getattr(a, "eigs", None)
    if eigs:
        if isinstance(eigs, str):
            eigs = [eigs]
        parts = []
        for path in eigs:
            data, name = _read_source(path, "--eigs")
            parts.append(spectra.read_spectrum_bytes(data, name, field="--eigs"))
        if len(parts) == 1:
            return parts[0], None
        return spectra.combine_snapshots(parts, [Path(p).name for p in eigs], field="--eigs"), None
    raise InputError("--eigs", "no spectrum given",
                     expected="--eigs FILE|- (repeat for snapshots), --matrix FILE, --frequencies FILE "
                              "or --enclosure JSON")


def _fmt(x):
    return "unbounded" if x is None else f"{x:.12g}"


def _interval_text(iv):
    lo, hi = iv
    return f"[{'-inf' if lo is None else f'{lo:.10g}'}, {'+inf' if hi is None else f'{hi:.10g}'}]"


def cmd_describe(a) -> int:
    from .report import describe
    d = describe(_scheme_from_args(a))
    if a.json:
        print(json.dumps(d, indent=2))
        return 0
    rows = [
        ("scheme", f"{d['name']}  ({d['label']})"),
        ("kind", f"{d['kind']}, {'explicit' if d['explicit'] else 'implicit'}, "
                 f"{d['steps']} step(s), {d['stages']} stage(s), "
                 f"{d['evaluations_per_step']} evaluation(s) per step"),
        ("order", str(d["order"]) + (f" (linear order {d['linear_order']})"
                                     if d["linear_order"] != d["order"] else "")),
        ("error constant", f"{d['error_constant']}  ~ {d['error_constant_value']:.6g}"
         if d["error_constant_value"] is not None else str(d["error_constant"])),
        ("  normalised", f"{d['error_constant_normalised']}  [{d['error_constant_convention']}]"),
        ("root condition", d["root_condition"]),
        ("real interval", _interval_text(d["real_interval"])),
        ("imag interval", _interval_text(d["imag_interval"])),
        ("A-stable", "yes" if d["a_stable"] else "no"),
        ("A(alpha)", "-" if d["a_alpha_deg"] is None else f"{d['a_alpha_deg']:.4f} deg"),
        ("A0-stable", "yes" if d["a0_stable"] else "no"),
        ("at infinity", "max |zeta| = " + ("inf" if d["infinity_max_modulus"] is None
                                            else f"{d['infinity_max_modulus']:.6g}")
         + (", stiff decay" if d["stiff_decay"] else "") + (", L-stable" if d["l_stable"] else "")),
        ("region", "bounded" if d["bounded"] else "unbounded"),
    ]
    if d["rho"]:
        rows.insert(2, ("rho", d["rho"]))
        rows.insert(3, ("sigma", d["sigma"]))
    w = max(len(r[0]) for r in rows)
    for k, v in rows:
        print(f"{k:<{w}}  {v}")
    for n in d["notes"]:
        print(f"note: {n}")
    return 0


def _enclosure_from_arg(text):
    from .spectra import parse_enclosure
    try:
        obj = json.loads(text)
    except json.JSONDecodeError as e:
        raise InputError("--enclosure", f"is not valid JSON: {e.msg}", position=e.pos,
                         expected='e.g. {"kind": "real-interval", "lo": -400, "hi": 0}') from None
    return parse_enclosure(obj, field="--enclosure")


def _print_limit_head(rep: dict) -> None:
    """Print the summary, h_max, the safety line and h_max per evaluation of a limit report."""
    print(rep["summary"])
    print(f"h_max            {_fmt(rep['h_max'])}")
    if rep["safety"] is not None:
        print(f"safety x h_max   {_fmt(rep['h_safe'])}   (factor {rep['safety']}, not applied to h_max)")
    print(f"per evaluation   {_fmt(rep['h_max_per_evaluation'])}  ({rep['evaluations_per_step']} evaluation(s) per step)")


def cmd_enclosure(a, scheme) -> int:
    from .report import enclosure_report
    enc = _enclosure_from_arg(a.enclosure)
    rep = enclosure_report(scheme, enc, safety=a.safety)
    if a.json:
        print(json.dumps(rep, indent=2))
        return 0
    _print_limit_head(rep)
    for m in rep["messages"]:
        print(f"note: {m}")
    print(CAUTION_LINE)
    return 0


def cmd_limit(a) -> int:
    from .report import limit_report
    scheme = _scheme_from_args(a)
    if a.enclosure:
        return cmd_enclosure(a, scheme)
    spec, _ = _spectrum_from_args(a)
    rep = limit_report(scheme, spec.values, safety=a.safety, per_eigenvalue=bool(a.per_eigenvalue))
    per = rep.pop("per_eigenvalue", None)
    if a.per_eigenvalue:
        out = Path(a.per_eigenvalue)
        with out.open("w") as fh:
            fh.write("re,im,h_max\n")
            for lam, h in zip(spec.values, per):
                fh.write(f"{lam.real!r},{lam.imag!r},{'inf' if h is None else repr(h)}\n")
    rep["spectrum"] = {"source": spec.source, "count": int(spec.values.size),
                       "partial": bool(spec.partial), "notes": list(spec.notes)}
    if spec.snapshot is not None and rep["binding_index"] is not None:
        rep["binding_snapshot"] = spec.snapshot_names[int(spec.snapshot[rep["binding_index"]])]
    if a.json:
        print(json.dumps(rep, indent=2))
        return 0
    _print_limit_head(rep)
    if rep["binding_eigenvalue"]:
        re_, im_ = rep["binding_eigenvalue"]
        print(f"binding          {re_:.12g}{im_:+.12g}i (index {rep['binding_index']})")
    wins = ", ".join(f"({a_:.10g}, {'inf' if b_ is None else f'{b_:.10g}'}]" for a_, b_ in rep["windows"])
    print(f"stable windows   {wins or 'none'}")
    if rep.get("binding_snapshot"):
        print(f"binding snapshot {rep['binding_snapshot']}")
    print(f"spectrum         {spec.source}: {spec.values.size} eigenvalue(s)")
    for m in list(rep["messages"]) + list(spec.notes):
        print(f"note: {m}")
    print(CAUTION_LINE)
    return 0


def cmd_verify(a) -> int:
    from .analysis.verify import verify
    scheme = _scheme_from_args(a)
    spec, mat = _spectrum_from_args(a)
    if a.step is None or not math.isfinite(a.step) or a.step <= 0:
        raise InputError("--step", "must be a positive number")
    if mat is not None:
        res = verify(scheme, a.step, matrix=mat, steps=a.steps)
    else:
        res = verify(scheme, a.step, eigenvalues=spec.values, steps=a.steps)
    d = {
        "scheme": scheme.name, "h": res.h, "steps": res.steps,
        "observed_growth_per_step": _safe(res.observed_growth_per_step),
        "predicted_growth": _safe(res.predicted_growth), "verdict": res.verdict,
        "max_transient": _safe(res.max_transient), "notes": list(res.notes),
        "norms": [_safe(x) for x in np.asarray(res.norms).tolist()],
    }
    if a.json:
        print(json.dumps(d, indent=2))
        return 0
    print(f"{scheme.name} at h = {res.h:.12g}, {res.steps} steps: {res.verdict}")
    print(f"observed growth per step  {d['observed_growth_per_step']}")
    print(f"predicted max |zeta|      {d['predicted_growth']}")
    print(f"max ||u_n|| / ||u_0||     {d['max_transient']}")
    for n in res.notes:
        print(f"note: {n}")
    return 0


def _safe(x):
    if x is None:
        return None
    x = float(x)
    return x if math.isfinite(x) else None


def cmd_accuracy(a) -> int:
    from .analysis.accuracy_limit import accuracy_report, accuracy_report_text
    scheme = _scheme_from_args(a)
    spec, _ = _spectrum_from_args(a)
    other = None
    if a.compare:
        from .specs import scheme_from_spec
        other = scheme_from_spec(a.compare, "--compare")
    if a.tol is None or not (0 < a.tol < 1):
        raise InputError("--tol", "must lie in (0, 1)")
    rep = accuracy_report(scheme, spec.values, h=a.step, tol=a.tol, per=a.per, other_scheme=other)
    if a.json:
        print(json.dumps(rep, indent=2, allow_nan=False))
        return 0
    print(accuracy_report_text(rep))
    print(CAUTION_LINE)
    return 0


def cmd_list(a) -> int:
    from .schemes.catalogue import LISTED, get_scheme
    for n in LISTED:
        s = get_scheme(n)
        print(f"{n:<16} {s.family:<24} {s.label}")
    print("parametrised: ab<p> am<p> bdf<k> ndf<k> nystrom<k> ms<k> theta:<value> "
          "rkc<s>[@eps] rkc2-<s>[@eps] <pred>-<corr>-pece|pec|pecece...")
    return 0


def cmd_serve(a) -> int:
    import uvicorn
    from .api.main import create_app
    if a.host not in ("127.0.0.1", "localhost", "::1"):
        if not a.allow_remote:
            raise InputError("--host", f"{a.host} is not loopback; add --allow-remote to listen on it")
        print(f"warning: listening on {a.host}: anyone who can reach this address can use the tool",
              file=sys.stderr)
    print(f"stepfence: open http://{a.host}:{a.port}/ (Ctrl-C to stop)", file=sys.stderr)
    uvicorn.run(create_app(), host=a.host, port=a.port, log_level="warning")
    return 0


def build_parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(prog="stepfence", description="Stability regions and exact step limits of time-stepping schemes.")
    sub = p.add_subparsers(dest="cmd", required=True)
    s = sub.add_parser("serve", help="serve the page on loopback")
    s.add_argument("--host", default="127.0.0.1")
    s.add_argument("--port", type=int, default=8000)
    s.add_argument("--allow-remote", action="store_true", help="allow a non-loopback --host")
    s.set_defaults(fn=cmd_serve)
    d = sub.add_parser("describe", help="order, error constant, root condition, region metrics")
    _add_scheme_args(d)
    d.set_defaults(fn=cmd_describe)
    lm = sub.add_parser("limit", help="largest stable step of a spectrum")
    _add_scheme_args(lm)
    lm.add_argument("--eigs", action="append",
                    help="eigenvalue file (text, csv, npy, npz) or - for stdin; repeat for snapshots")
    lm.add_argument("--matrix", help="matrix file (MatrixMarket .mtx, csv, npy)")
    lm.add_argument("--mass", help="mass matrix file: M u' = J u")
    lm.add_argument("--frequencies", help="file of oscillation frequencies, mapped to +-i omega")
    lm.add_argument("--unit", default="rad/s", help="frequency unit: rad/s or Hz")
    lm.add_argument("--enclosure", help='JSON enclosure, e.g. {"kind": "real-interval", "lo": -400, "hi": 0}, '
                    '{"kind": "disk", "center": [-50, 0], "radius": 50}, {"kind": "imag-segment", "lo": -5, "hi": 5}, '
                    '{"kind": "ellipse", "center": [-10, 0], "semi_real": 10, "semi_imag": 2}')
    lm.add_argument("--safety", type=float, help="factor shown beside h_max, e.g. 0.9")
    lm.add_argument("--per-eigenvalue", metavar="FILE", help="write per-eigenvalue limits as CSV")
    lm.set_defaults(fn=cmd_limit)
    v = sub.add_parser("verify", help="step u' = J u and compare growth with the prediction")
    _add_scheme_args(v)
    v.add_argument("--matrix", help="matrix file (MatrixMarket .mtx, csv, npy)")
    v.add_argument("--eigs", help="eigenvalue file: step the diagonal system")
    v.add_argument("--step", type=float, help="step size h")
    v.add_argument("--steps", type=int, default=200)
    v.set_defaults(fn=cmd_verify)
    ac = sub.add_parser("accuracy", help="amplitude/phase error and the accuracy-limited step")
    _add_scheme_args(ac)
    ac.add_argument("--eigs", action="append", help="eigenvalue file or - for stdin")
    ac.add_argument("--matrix", help="matrix file (MatrixMarket .mtx, csv, npy)")
    ac.add_argument("--step", type=float, help="the step h to report damping and phase at")
    ac.add_argument("--tol", type=float, default=1e-6, help="local error tolerance (default 1e-6)")
    ac.add_argument("--per", choices=("step", "unit-time"), default="step")
    ac.add_argument("--compare", help="a second catalogue scheme to compare per evaluation")
    ac.set_defaults(fn=cmd_accuracy)
    ls = sub.add_parser("list", help="list the catalogue")
    ls.set_defaults(fn=cmd_list)
    return p


def main(argv=None) -> int:
    parser = build_parser()
    a = parser.parse_args(argv)
    try:
        return a.fn(a)
    except InputError as e:
        print(f"stepfence: {e.describe()}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        return 130
    except BrokenPipeError:  # output piped into head & co.
        import os
        os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
        return 0


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())

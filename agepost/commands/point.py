"""``agepost point``: age, Hubble time, lookback and cosmic times for one parameter point."""

from __future__ import annotations

import argparse
import sys

from agepost.commands.common import add_model_arguments, finite_float, redshift_tokens
from agepost.errors import NoBigBangError, ParameterError
from agepost.exclusions import Exclusion
from agepost.outputs import dumps_json
from agepost.physics.background import DEFAULTS, make_background
from agepost.physics.times import expansion_history


def register(subparsers: argparse._SubParsersAction) -> None:
    parser = subparsers.add_parser(
        "point",
        help="evaluate one parameter point",
        description="Age today, Hubble time, and lookback and cosmic times at chosen redshifts "
        "for one set of parameters (Gyr).",
    )
    parser.add_argument(
        "--H0",
        dest="h0",
        type=finite_float,
        required=True,
        metavar="KM_S_MPC",
        help="Hubble constant in km/s/Mpc",
    )
    parser.add_argument(
        "--omega-m",
        type=finite_float,
        required=True,
        help="matter density today, massive neutrinos included",
    )
    parser.add_argument(
        "--omega-k",
        type=finite_float,
        default=DEFAULTS["omega_k"],
        help="curvature density (default 0)",
    )
    parser.add_argument(
        "--w0", type=finite_float, default=DEFAULTS["w0"], help="dark energy w today (default -1)"
    )
    parser.add_argument(
        "--wa",
        type=finite_float,
        default=DEFAULTS["wa"],
        help="dark energy w evolution (default 0)",
    )
    parser.add_argument(
        "--m-nu",
        type=finite_float,
        default=DEFAULTS["m_nu"],
        metavar="EV",
        help=f"sum of neutrino masses in eV (default {DEFAULTS['m_nu']})",
    )
    parser.add_argument(
        "--n-eff",
        type=finite_float,
        default=DEFAULTS["n_eff"],
        help=f"effective number of neutrino species (default {DEFAULTS['n_eff']})",
    )
    add_model_arguments(parser, with_defaults=True)
    parser.add_argument(
        "--z", action="append", metavar="Z", help="redshift(s); repeat or give a comma list"
    )
    parser.add_argument("--json", action="store_true", help="print one JSON object instead of text")
    parser.set_defaults(handler=run)


def evaluate(args: argparse.Namespace) -> dict:
    """The JSON record of one point (raises ParameterError / NoBigBangError)."""
    tokens = redshift_tokens(args.z)
    for flag, value in (("--H0", args.h0), ("--t-cmb", args.t_cmb)):
        if value <= 0:
            raise ParameterError(f"{flag} {value} is not allowed; it must be positive")
    for flag, value in (
        ("--omega-m", args.omega_m),
        ("--m-nu", args.m_nu),
        ("--n-eff", args.n_eff),
    ):
        if value < 0:
            raise ParameterError(f"{flag} {value} is not allowed; it must be zero or positive")
    parameters = dict(
        h0=args.h0,
        omega_m=args.omega_m,
        omega_k=args.omega_k,
        w0=args.w0,
        wa=args.wa,
        m_nu=args.m_nu,
        n_eff=args.n_eff,
        t_cmb=args.t_cmb,
    )
    background = make_background(**parameters, n_massive=args.n_massive, radiation=args.radiation)
    history = expansion_history(background, [float(t) for t in tokens])
    code = Exclusion(int(history.exclusion[0]))
    if code == Exclusion.NO_BIG_BANG:
        raise NoBigBangError(
            f"this point has no big bang (H^2 reaches zero before a = 0; Omega_de = "
            f"{background.omega_de[0]:.4g}): its age is undefined. Lower Omega_de by raising "
            "--omega-m or --omega-k, or check the dark-energy parameters"
        )
    if code != Exclusion.KEPT:
        raise ParameterError(
            f"parameters not usable: {code.description}; raise --omega-m or lower --m-nu"
        )
    return {
        "age_gyr": float(history.age_gyr[0]),
        "hubble_time_gyr": float(history.hubble_time_gyr[0]),
        "lookback_gyr": {t: float(v) for t, v in zip(tokens, history.lookback_gyr[0], strict=True)},
        "age_at_z_gyr": {
            t: float(v) for t, v in zip(tokens, history.cosmic_time_gyr[0], strict=True)
        },
        "parameters": {
            "H0": args.h0,
            "Omega_m": args.omega_m,
            "Omega_k": args.omega_k,
            "w0": args.w0,
            "wa": args.wa,
            "m_nu": args.m_nu,
            "N_eff": args.n_eff,
            "T_cmb": args.t_cmb,
        },
        "model": {
            "radiation": args.radiation,
            "n_massive": args.n_massive,
            "Omega_de": float(background.omega_de[0]),
        },
    }


def run(args: argparse.Namespace) -> int:
    record = evaluate(args)
    if args.json:
        print(dumps_json(record))
        return 0
    out = sys.stdout
    out.write(f"age today        {record['age_gyr']:.4f} Gyr\n")
    out.write(f"Hubble time 1/H0 {record['hubble_time_gyr']:.4f} Gyr\n")
    if record["lookback_gyr"]:
        out.write(f"{'z':>10}  {'lookback [Gyr]':>15}  {'age at z [Gyr]':>15}\n")
        for token, lookback in record["lookback_gyr"].items():
            out.write(f"{token:>10}  {lookback:15.4f}  {record['age_at_z_gyr'][token]:15.6g}\n")
    model = record["model"]
    out.write(
        f"(radiation {model['radiation']}, Omega_de = {model['Omega_de']:.5f}, "
        f"m_nu = {args.m_nu} eV in {model['n_massive']} species, N_eff = {args.n_eff}, "
        f"T_cmb = {args.t_cmb} K)\n"
    )
    return 0

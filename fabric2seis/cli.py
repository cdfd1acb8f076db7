"""Command-line shell: parse arguments, call the library, turn bad input into exit status 2.

No science lives here. Every command body is a few lines calling fabric2seis functions.
"""

from __future__ import annotations

import argparse
import os
import sys

import numpy as np

from fabric2seis import __version__
from fabric2seis.errors import InputError


def _minerals(args: argparse.Namespace) -> int:
    from fabric2seis.elastic.minerals import find_mineral, load_library, user_entries

    library = load_library(args.library_dir or ())
    if args.name is None:
        print(f"{'name':<12} {'point group':<11} {'density':>12}  {'checked':<8} {'constants':<26} "
              f"{'to P, T':<8} source")
        for m in library.values():
            checked = "yes" if not m.from_memory else "partly"
            print(f"{m.name:<12} {m.point_group:<11} {m.density_kg_m3:>7.0f} kg/m³  {checked:<8} "
                  f"{constants_status(m):<26} {depth_status(m):<8} {m.source.split(';')[0]}")
        print("\n'checked: partly' means some fields were recalled without the source at hand; "
              "'fabric2seis minerals NAME' lists which. 'constants': read in the source, or recalled and "
              "compared with published aggregate moduli (Hill average; DISPUTED beyond 8 %). 'to P, T': "
              "P and T when the library holds pressure and temperature derivatives (P~ for the aggregate's "
              "rates only); a mineral without them is refused away from the conditions of its "
              "measurement unless conditions.allow_ambient_constants is set.")
        for entry in user_entries(library):
            print(f"your own: {entry['name']} from {entry['file']}" + (
                f", replacing the packaged {entry['replaces']}" if entry["replaces"] else ""))
        return 0
    print(describe_mineral(find_mineral(args.name, library)))
    return 0


def _sample(args: argparse.Namespace) -> int:
    from fabric2seis.pipeline import run_sample
    from fabric2seis.progress import terminal_bars

    def progress(message: str) -> None:
        if sys.stderr.isatty():
            print(f"[{args.input}] {message}", file=sys.stderr, flush=True)

    out = run_sample(args.input, args.settings, args.out, progress, bars=terminal_bars(),   # bars on a TTY only
                     minerals_dir=args.minerals, threads=thread_option(args.threads))
    print(f"wrote {out}")
    return 0


def thread_option(text: str | None) -> int | None:
    """The value of ``--threads``: a whole number of at least 1, or None when the option is not given.

    Parameters
    ----------
    text : str or None
        The option's text.

    Returns
    -------
    int or None
        The threads; None leaves the default (``threads.default_thread_count``).

    Raises
    ------
    InputError
        If the text is not a whole number of at least 1.
    """
    if text is None:
        return None
    try:
        threads = int(text)
    except ValueError:
        threads = 0
    if threads < 1:
        raise InputError(f"'{text}' is not a number of threads; give a whole number of at least 1",
                         None, "option --threads")
    return threads


def _optics(args: argparse.Namespace) -> int:
    from fabric2seis.optics.section import run_optics

    def progress(message: str) -> None:
        if sys.stderr.isatty():
            print(f"[{args.input}] {message}", file=sys.stderr, flush=True)

    out = run_optics(args.input, args.settings, args.out, progress)
    print(f"wrote {out}")
    return 0


def _synth(args: argparse.Namespace) -> int:
    from fabric2seis.elastic.minerals import find_mineral
    from fabric2seis.ingest.io.write import write_table
    from fabric2seis.synth import fabric_orientations

    mineral = find_mineral(args.mineral)
    quat = fabric_orientations(mineral, args.fabric, args.n, args.scatter_deg, args.seed)
    weights = None
    if args.weights:
        weights = np.random.default_rng(args.seed + 1).lognormal(0.0, 0.5, args.n).round(4)
    write_table(args.output, quat, [mineral.name] * args.n, weight=weights)
    print(f"wrote {args.n} {mineral.name} grains ({args.fabric}, scatter {args.scatter_deg} deg) to {args.output}")
    return 0


#: the samples folder of ``fabric2seis suite`` without --samples (the demo samples of the fabric2seis folder)
DEMO_SAMPLES = "demo_samples"


def _suite(args: argparse.Namespace, extra: list[str]) -> int:
    from pathlib import Path

    from fabric2seis.workflow import SNAKEFILE
    from fabric2seis.workflow.config import base_config_file, check_config_files, check_config_paths, split_config_files
    from fabric2seis.workflow.suite import discover_samples

    extra = [word for word in extra if word != "--"]      # '--' only separates Snakemake's arguments
    user_config, files, rest = split_config_arguments([*(["--config", *args.config] if args.config else []), *extra])
    for name in files:
        if not Path(name).is_file():
            raise InputError("no such config file (--config takes a YAML file or KEY=VALUE items)", name,
                             "option --config")
    given_files, rest = split_config_files(rest)
    files += given_files
    checked = check_config_files([base_config_file(), *files])      # plain YAML and known keys, before Snakemake
    # folders not given on the command line: the last config file that names them (the project's
    # config/config.yaml, or the packaged defaults: demo_samples and results), relative to this folder
    folders = (("samples", "samples_dir"), ("results", "results_dir"))
    given = [f"{key}={getattr(args, option)}" for option, key in folders
             if getattr(args, option) is not None]      # a folder named in a config file stays checked by the workflow
    if args.minerals is not None:            # your own mineral entries, for every sample of the suite
        if not Path(args.minerals).is_dir():
            raise InputError("no such folder of mineral entries", args.minerals, "option --minerals")
        given.append(f"minerals_dir={Path(args.minerals).resolve()}")
    merged = {k: v for _, data in checked for k, v in data.items()}
    check_config_paths(merged, checked, {item.split("=", 1)[0]: True for item in given})
    for option, key in folders:
        named = [(path, data[key]) for path, data in checked if data.get(key) is not None]
        if getattr(args, option) is None and named:
            setattr(args, option, str(named[-1][1]))
            if option == "samples" and not Path(args.samples).is_dir():
                raise InputError(f"no samples folder '{args.samples}' here (named by {named[-1][0]}): give the "
                                 "folder of EBSD exports with --samples DIR", Path.cwd())
    if args.samples is None or args.results is None:     # no config names them: the packaged defaults' names
        given += [f"samples_dir={args.samples or DEMO_SAMPLES}"] if args.samples is None else []
        given += ["results_dir=results"] if args.results is None else []
        args.samples, args.results = args.samples or DEMO_SAMPLES, args.results or "results"
    if not Path(args.samples).is_dir():
        raise InputError("no such samples folder", args.samples)
    try:
        no_samples = not discover_samples(args.samples)
    except ValueError:                      # two files give one sample name: the closing line says so
        no_samples = False
    if no_samples:
        raise InputError("no EBSD exports here (.ang, .ctf, .h5, or .csv tables; text formats also .gz)",
                         args.samples, "option --samples")
    # the packaged workflow, run in this folder; --samples and --results go to Snakemake as --config:
    # command-line folders may lie anywhere
    command = [sys.executable, "-m", "snakemake", "--snakefile", str(SNAKEFILE), "--cores", str(args.cores),
               *(["--configfile", *files] if files else []),
               *(["--config", *given, *user_config] if given or user_config else []), *rest]
    if "--unlock" in rest:                  # the user releases a lock by hand: pass it on as it is
        return _snakemake(command)[0]
    lock = _hold_results_folder(args.results)
    if lock is None:
        raise InputError("another run of the workflow is writing to this results folder; wait for it to finish",
                         args.results, "option --results")
    try:
        return _run_suite(args, command, rest, lock)
    finally:
        os.close(lock)


def _init(args: argparse.Namespace) -> int:
    from fabric2seis.workflow.project import write_starter_project

    written = write_starter_project(args.folder)
    names = ", ".join(str(path.relative_to(args.folder)) for path in written)
    print(f"wrote {names} into {args.folder}; next: read {args.folder}/README.txt")
    return 0


def _run_suite(args: argparse.Namespace, command: list[str], rest: list[str], lock: int) -> int:
    """Run the workflow holding the results folder's lock; the exit status of ``fabric2seis suite``."""
    from pathlib import Path

    # a killed run leaves Snakemake's lock and its half-done jobs marked incomplete; no other suite
    # holds this folder now, so such a lock is stale: release it and run the unfinished jobs again
    # (every job's outputs are written whole, fabric2seis/folders.py)
    command.append("--rerun-incomplete")
    status, locked = _snakemake(command, lock)
    if locked and status != 0:
        print("fabric2seis suite: an earlier run on this results folder was stopped before it finished; "
              "releasing its lock and going on", file=sys.stderr, flush=True)
        _snakemake([*command, "--unlock"], lock, quiet=True)
        status, locked = _snakemake(command, lock)
    if locked and status != 0:
        raise InputError(f"Snakemake's lock in {Path.cwd() / '.snakemake' / 'locks'} refuses the run (a plain "
                         f"'snakemake' run on the same files?); wait for it, or release the lock with: "
                         f"fabric2seis suite --samples {args.samples} --results {args.results} --unlock",
                         args.results, "option --results")
    if any(word in rest for word in ("-n", "--dry-run", "--dryrun", "--report", "--lint", "--list-rules")):
        return status                       # no samples were run: nothing to tell
    line, failed = suite_outcome(args.samples, args.results)
    print(line, file=sys.stderr, flush=True)
    if status == 0 and failed and args.strict:
        return EXIT_FAILED_SAMPLES
    return status


#: exit status of ``fabric2seis suite --strict`` when the workflow ran but a sample failed
EXIT_FAILED_SAMPLES = 3


def suite_outcome(samples: str, results: str) -> tuple[str, int]:
    """One line on a suite's samples after a run: how many, how many ok, each failure with its reason.

    Parameters
    ----------
    samples : str
        The samples folder.
    results : str
        The results folder.

    Returns
    -------
    tuple of (str, int)
        The line, and how many samples failed or have no status yet.
    """
    from pathlib import Path

    from fabric2seis.workflow.status import read_status
    from fabric2seis.workflow.suite import discover_samples

    try:
        names = sorted(discover_samples(samples))
    except ValueError as exc:
        return f"fabric2seis suite: {exc}", 1
    ok, failures = 0, []
    for name in names:
        try:
            status = read_status(Path(results) / "status" / f"{name}.json")
        except (OSError, ValueError):
            failures.append(f"{name}: not run (see Snakemake's messages above)")
            continue
        if status.ok:
            ok += 1
        else:
            failures.append(f"{name}: {status.status}")
    line = f"fabric2seis suite: {len(names)} samples, {ok} ok, {len(failures)} failed"
    return line + ("; " + "; ".join(failures) if failures else ""), len(failures)


def _hold_results_folder(results: str) -> int | None:
    """Take the lock that keeps one ``fabric2seis suite`` per results folder; None if another run holds it.

    The lock is an ``flock`` on a file in the project's ``.snakemake`` folder named after the results
    folder's full path; the system releases it when the run ends however it ends, even when killed.
    Snakemake inherits the descriptor, so a Snakemake that outlives a killed ``fabric2seis`` keeps it.
    """
    import fcntl
    import hashlib
    from pathlib import Path

    key = hashlib.sha256(str(Path(results).resolve()).encode("utf-8", "surrogateescape")).hexdigest()[:16]
    folder = Path(".snakemake")
    folder.mkdir(exist_ok=True)
    fd = os.open(folder / f"fabric2seis-suite-{key}.lock", os.O_RDWR | os.O_CREAT, 0o644)
    try:
        fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
    except OSError:
        os.close(fd)
        return None
    os.set_inheritable(fd, True)
    return fd


def _snakemake(command: list[str], lock: int | None = None, quiet: bool = False) -> tuple[int, bool]:
    """Run Snakemake; its exit status, and whether its lock refused the run."""
    import subprocess

    process = subprocess.Popen(command, stderr=subprocess.PIPE, text=True, errors="replace",
                               pass_fds=() if lock is None else (lock,),
                               stdout=subprocess.DEVNULL if quiet else None)
    try:
        locked = pass_on_messages([] if quiet else (process.stderr or []))
        if quiet and process.stderr:
            process.stderr.read()
        status = process.wait()
    except KeyboardInterrupt:
        return process.wait() or 130, False
    return status, locked


def pass_on_messages(lines) -> bool:
    """Pass Snakemake's messages on to stderr, unless its lock refuses the run; tell whether it did.

    Lines are held until Snakemake has built its plan and taken the lock (the line after "Building
    DAG of jobs"), and dropped if the lock refused the run, so that the refusal is one line.
    """
    held: list[str] | None = []
    planned = locked = False
    for line in lines:
        if held is None:
            sys.stderr.write(line)
            sys.stderr.flush()
        elif line.startswith("LockException"):
            locked = True
            break
        else:
            held.append(line)
            if planned:
                sys.stderr.writelines(held)
                held = None
            planned = planned or line.startswith("Building DAG of jobs")
    for _line in lines:         # the rest of a refusal: read to the end, not shown
        pass
    if held and not locked:
        sys.stderr.writelines(held)
    return locked


def split_config_arguments(extra: list[str]) -> tuple[list[str], list[str], list[str]]:
    """The items of every ``--config`` among Snakemake's arguments: ``key=value`` items, config files, the rest.

    Snakemake keeps only the last ``--config`` it is given, so the user's items are merged into
    the one that carries ``--samples`` and ``--results``; setting ``samples_dir`` or
    ``results_dir`` there is refused, since the options say where the samples and results are.
    An item without ``=`` is a YAML config file (``fabric2seis suite --config my_settings.yaml``),
    handed to Snakemake as ``--configfile``.
    """
    items, rest, k = [], [], 0
    while k < len(extra):
        word = extra[k]
        if word == "--config" or word.startswith("--config="):
            taken = [word.split("=", 1)[1]] if "=" in word else []
            k += 1
            while "=" not in word and k < len(extra) and not extra[k].startswith("-"):
                taken.append(extra[k])
                k += 1
            items += taken
            continue
        rest.append(word)
        k += 1
    pairs = [item for item in items if "=" in item]
    for item in pairs:
        key = item.split("=", 1)[0].strip()
        if key in ("samples_dir", "results_dir"):
            option = "--samples" if key == "samples_dir" else "--results"
            raise InputError(f"give the folder with {option}, not with --config {key}=...", None,
                             f"argument --config {item}")
    return pairs, [item for item in items if "=" not in item], rest


def _field(args: argparse.Namespace) -> int:
    from fabric2seis.commands import run_field, run_stack

    if args.stack:
        if args.result_dirs or args.fix:
            raise InputError("with --stack the layers come from the stack file: give no RESULT_DIR and no --fix",
                             args.stack)
        out, cautions = run_stack(args.stack, args.measurements, args.out)
    elif not args.result_dirs or not args.measurements:
        raise InputError("field needs RESULT_DIR... and --measurements CSV (or --stack FILE, where "
                         "--measurements is optional)")
    else:
        from fabric2seis.progress import terminal_bars

        out, cautions = run_field(args.result_dirs, args.measurements, args.out, set(args.fix or ()),
                                  threads=thread_option(args.threads), bars=terminal_bars())   # bars on a TTY only
    print(f"wrote {out}")
    for note in cautions:
        print(f"caution: {note}")
    return 0


def _combine(args: argparse.Namespace) -> int:
    from fabric2seis.commands import run_combine

    out, cautions = run_combine(args.result_dirs, args.out, args.name)
    print(f"wrote {out}")
    for note in cautions:
        print(f"caution: {note}")
    return 0


def depth_status(m) -> str:
    """'P', 'T', 'P T' (with ~ for aggregate-only rates) or '-': what a mineral can be brought to."""
    parts = [letter + ("~" if block in m.aggregate_derivatives else "")
             for letter, block, d in (("P", "pressure_derivatives", m.dcij_dp),
                                      ("T", "temperature_derivatives", m.dcij_dt_gpa_per_k)) if d is not None]
    return " ".join(parts) or "-"


def constants_status(m) -> str:
    """How far to trust a library entry's constants, in a few words."""
    if not m.constants_recalled:
        return "read in the source"
    check = m.aggregate_comparison()
    if check is None:
        return "recalled, unchecked"
    verdict = "DISPUTED" if check["disputed"] else "recalled, agrees"
    return f"{verdict} {100 * check['largest_difference']:.1f} %"


def describe_mineral(m) -> str:
    """A full, human-readable account of one library entry."""
    def table(a: np.ndarray, fmt: str = "8.2f") -> str:
        return "\n".join("    " + " ".join(f"{v:{fmt}}" for v in row) for row in a)

    lat = m.lattice
    lines = [
        f"{m.name}  (aliases: {', '.join(m.aliases) or 'none'})",
        f"  point group     {m.point_group}" + (f", {m.unique_axis} unique" if m.unique_axis else ""),
        f"  density         {m.density_kg_m3:.1f} kg m^-3",
        f"  lattice         a {lat['a']} b {lat['b']} c {lat['c']} angstrom, "
        f"alpha {lat['alpha']} beta {lat['beta']} gamma {lat['gamma']} degrees",
        f"  source          {m.source}",
        f"  from memory     {', '.join(m.from_memory) or 'nothing (all read in the source)'}",
        "  published axes  " + ", ".join(f"{k.upper()} || {v}" for k, v in sorted(m.published_axes.items())),
        "  Cij as published (GPa, Voigt order 11 22 33 23 13 12):",
        table(m.cij_published_gpa),
        "  Cij in orix's crystal frame, e1 || a, e3 || c* (GPa):",
        table(m.stiffness_gpa),
    ]
    if m.dcij_dp is not None:
        lines += [f"  dCij/dP (dimensionless), {m.pressure_source}:", table(m.dcij_dp)]
    if m.dcij_dt_gpa_per_k is not None:
        lines += [f"  dCij/dT (GPa/K), {m.temperature_source}:", table(m.dcij_dt_gpa_per_k, "8.4f")]
    for block, given in m.aggregate_derivatives.items():
        lines.append(f"  {block.replace('_', ' ')} given for the aggregate only "
                     f"({', '.join(f'{k} {v:g}' for k, v in given.items())}), applied to every direction alike")
    if m.derivatives_from_memory:
        lines.append(f"  derivatives from memory: {', '.join(m.derivatives_from_memory)}")
    lines.append(f"  measured at     {m.reference_temperature_c:g} C, {m.reference_pressure_gpa:g} GPa "
                 "(corrections to a sample's conditions start here)")
    for twin in m.twins:
        lines.append(f"  twin law        {twin['name']}: {twin['angle_deg']:g} degrees about {twin['axis']} "
                     f"({twin['source']})")
    check = m.aggregate_comparison()
    if check is not None:
        lines.append(f"  aggregate check Hill K {check['k_hill_gpa']:g}, G {check['g_hill_gpa']:g} GPa against "
                     f"K {check['k_published_gpa']:g}, G {check['g_published_gpa']:g} GPa ({check['source']}): "
                     f"{constants_status(m)}")
    if m.optics is not None:
        o = m.optics
        indices = (f"n {o.n_alpha:g}" if o.kind == "isotropic" else
                   f"n_o {o.principal_n[0]:g}, n_e {o.principal_n[2]:g}" if o.kind == "uniaxial" else
                   f"n_alpha {o.n_alpha:g}, n_beta {o.n_beta:g}, n_gamma {o.n_gamma:g}")
        sign = f", optic sign {o.optic_sign}, 2V_z {o.two_v_z_deg():.1f} deg" if o.optic_sign else ""
        lines.append(f"  optics          {o.kind}: {indices}{sign}, birefringence up to {o.max_birefringence:.4f} "
                     f"({o.source}{'; recalled' if o.recalled else ''})")
    if m.notes:
        lines.append(f"  notes           {m.notes}")
    lines.append(f"  file            {m.file}")
    return "\n".join(lines)


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="fabric2seis",
        description="From EBSD crystal orientations to seismic anisotropy and shear-wave splitting.")
    parser.add_argument("--version", action="version", version=f"fabric2seis {__version__}")
    commands = parser.add_subparsers(dest="command", required=True, metavar="COMMAND")

    p = commands.add_parser(
        "suite", help="run the Snakemake workflow over every sample in a folder",
        description="Run the Snakemake workflow (it ships inside the package) in the current folder over every "
                    "sample in a folder, then print one line: samples, how many ok, and each failed sample with its "
                    "one-line reason. The config is config/config.yaml of the current folder if it has one, else "
                    "the packaged defaults; --config FILE goes over it.",
        epilog="Other arguments go to Snakemake unchanged; put them after '--' to be safe, e.g. "
               "'fabric2seis suite -- --dry-run' or '-- --report results/report.html'. Exit status: 0 the "
               "workflow ran (failed samples are rows of suite_summary.csv), 1 Snakemake failed, 2 bad input "
               "or another suite holds the results folder, 3 with --strict when a sample failed, 130 "
               "interrupted.")
    p.add_argument("--samples", metavar="DIR", help="folder of EBSD exports (default: samples_dir of the config, "
                   f"{DEMO_SAMPLES} in the packaged defaults)")
    p.add_argument("--results", metavar="DIR", help="results folder (default: results_dir of the config, results "
                   "in the packaged defaults)")
    p.add_argument("--minerals", metavar="DIR", help="folder of your own mineral entries (YAML, checked like the "
                   "packaged ones; an entry of a packaged name replaces it); config key minerals_dir")
    p.add_argument("--cores", default="2", metavar="N", help="cores for Snakemake (default 2)")
    p.add_argument("--config", nargs="+", action="extend", metavar="FILE|KEY=VALUE",
                   help="a YAML config file over the defaults (checked like config/config.yaml; may be repeated), "
                        "or settings as KEY=VALUE, e.g. \"odf={halfwidth_deg: 15}\"")
    p.add_argument("--strict", action="store_true", help="exit with status 3 if any sample failed")
    p.set_defaults(run=_suite, takes_extra=True)

    p = commands.add_parser("init", help="write a starter project into a folder: config, example sidecar, "
                            "field measurements template, README",
                            description="Write a starter project into FOLDER (created if missing): "
                                        "config/config.yaml (every key explained), samples/example.yaml (a "
                                        "sample's own settings), field_measurements_template.csv and README.txt "
                                        "(the next commands). Existing files are never written over.")
    p.add_argument("folder", metavar="FOLDER", help="the project folder")
    p.set_defaults(run=_init)

    p = commands.add_parser("sample", help="process one EBSD export into a results folder")
    p.add_argument("input", help="EBSD export: .ang, .ctf, .h5, .csv (text formats also .gz)")
    p.add_argument("--settings", metavar="FILE", help="settings YAML (default: INPUT's sidecar <stem>.yaml, "
                   "else config/config.yaml)")
    p.add_argument("--out", metavar="DIR", help="output folder (default results/<stem>)")
    p.add_argument("--minerals", metavar="DIR", help="a folder of your own mineral files (*.yaml): they add "
                   "minerals or replace library entries of the same name (instead of the settings key minerals_dir)")
    p.add_argument("--threads", metavar="N", help="threads the run may use (default: OMP_NUM_THREADS when set, else "
                   "the cores this process may run on); the results are the same on any number")
    p.set_defaults(run=_sample)

    p = commands.add_parser("optics", help="predict the crossed-polar view of the thin section: images at "
                            "stage turns, retardation map, interference-colour chart, birefringence per phase")
    p.add_argument("input", help="EBSD export: .ang, .ctf, .h5, .csv (text formats also .gz)")
    p.add_argument("--settings", metavar="FILE", help="settings YAML, block 'optics' (default: INPUT's sidecar "
                   "<stem>.yaml, else config/config.yaml)")
    p.add_argument("--out", metavar="DIR", help="output folder (default results/optics/<stem>)")
    p.set_defaults(run=_optics)

    p = commands.add_parser("field", help="compare predicted splitting with field measurements and fit a layer; "
                            "or predict the apparent splitting of several layers (--stack)")
    p.add_argument("result_dirs", nargs="*", metavar="RESULT_DIR", help="results folders of 'fabric2seis sample' "
                   "(not with --stack)")
    p.add_argument("--measurements", metavar="CSV",
                   help="station, baz_deg, fast_azimuth_deg, delay_s [, fast_azimuth_err_deg, delay_err_s, null, "
                        "incidence_deg]; needed for the fit, optional with --stack (then drawn over the predictions)")
    p.add_argument("--out", metavar="DIR", help="output folder (default results/field; with --stack results/stack)")
    p.add_argument("--fix", action="append", choices=["thickness", "azimuth", "foliation"],
                   help="hold one parameter at the sample's own field settings; may be repeated")
    p.add_argument("--stack", metavar="FILE", help="several layers (YAML, bottom to top): apparent splitting "
                   "against back-azimuth, analytic and from synthetic waveforms, and the predicted nulls")
    p.add_argument("--threads", metavar="N", help="processes that draw the figures of the fit (default: "
                   "OMP_NUM_THREADS when set, else the cores this process may run on); the files are the same")
    p.set_defaults(run=_field)

    p = commands.add_parser("combine", help="combine the results of the pieces of a map into those of the whole map",
                            description="Add the weighted sums (weighted_sums.json) of the results folders of the "
                                        "pieces of one map, processed with the same settings, and write the tensors, "
                                        "velocities and splitting of the whole map. With area weighting they equal "
                                        "those of the whole map processed at once; fabric indices, grain counts and "
                                        "bootstrap intervals are not combined.")
    p.add_argument("result_dirs", nargs="+", metavar="RESULT_DIR", help="results folders of 'fabric2seis sample', "
                   "one per piece (or of an earlier combination)")
    p.add_argument("--out", metavar="DIR", help="output folder (default results/combined)")
    p.add_argument("--name", help="name of the combined map (default: the output folder's name)")
    p.set_defaults(run=_combine)

    from fabric2seis.synth import IDEAL_FABRICS

    p = commands.add_parser("synth", help="write a synthetic grain list: a named ideal fabric with "
                            "scatter, or random")
    p.add_argument("output", help="CSV file to write (grain-list table of CONTRACT.md)")
    p.add_argument("--mineral", default="olivine", help="library mineral (default olivine)")
    p.add_argument("--fabric", default="random", choices=["random", *IDEAL_FABRICS],
                   help="ideal fabric: which crystal directions lie along X and Z (default random)")
    p.add_argument("--n", type=int, default=1000, help="number of grains (default 1000)")
    p.add_argument("--scatter-deg", type=float, default=15.0,
                   help="Gaussian scatter about the ideal orientation, degrees (default 15)")
    p.add_argument("--seed", type=int, default=1, help="random seed (default 1)")
    p.add_argument("--weights", action="store_true", help="add a log-normal grain weight column")
    p.set_defaults(run=_synth)

    p = commands.add_parser("minerals", help="list the mineral library or show one entry in full")
    p.add_argument("name", nargs="?", help="mineral name or alias (case-insensitive)")
    p.add_argument("--minerals", "--library-dir", action="append", metavar="DIR", dest="library_dir",
                   help="also read your own mineral files (*.yaml) in DIR, as 'sample --minerals DIR' does; "
                        "may be repeated")
    p.set_defaults(run=_minerals)
    return parser


def main(argv: list[str] | None = None) -> int:
    parser = build_parser()
    args, extra = parser.parse_known_args(argv)
    if extra and not getattr(args, "takes_extra", False):
        parser.error(f"unrecognized arguments: {' '.join(extra)}")
    try:
        return args.run(args, extra) if getattr(args, "takes_extra", False) else args.run(args)
    except InputError as exc:
        print(f"fabric2seis {args.command}: error: {exc.one_line()}", file=sys.stderr)
        return 2


#: commands whose process ends without the interpreter's clean-up (``console``): they hold large
#: arrays whose freeing one by one takes about a second at 10^6 pixels, and they leave nothing open
FAST_EXIT_COMMANDS = ("sample", "combine")


def console() -> None:
    """The ``fabric2seis`` console script (also ``python -m fabric2seis``): :func:`main`, then exit.

    After ``sample`` and ``combine`` the process leaves with ``os._exit`` once its output is
    flushed: every file they write is closed and moved into place before :func:`main` returns,
    and the interpreter's own clean-up (freeing the stages' arrays object by object) would only
    add about a second at 10^6 pixels. Other commands exit normally.
    """
    code = main()
    if len(sys.argv) > 1 and sys.argv[1] in FAST_EXIT_COMMANDS:
        try:
            sys.stdout.flush()
            sys.stderr.flush()
        finally:
            os._exit(code)
    raise SystemExit(code)

"""Scans: a presentation file with integer parameters, over a set of cases × a grid of values.

For every grid point (an assignment of the parameters) and case the scan records what
`check_case` says about the file's presentation next to a reference (default `whitney`):
colength at a random specialisation, classical colength, whether the relations hold, and the
verdict.  Only the verdict word `agree` counts as agreement; `consistent`, `inconclusive` and
anything else do not.

Cost.  Most grid points of a wrong guess fail at the Bethe points already.  So a point is
first checked with the points alone (no Gröbner basis); when a relation fails there and the
engine concludes `disagree` from it (an exact refutation with a witness: the points are
points of the quantum K ring, so a relation that does not vanish at one of them is not in
its ideal), the point is stored as such, without colengths.  Every other point gets the
engine's automatic check (its exact route).  `--colengths` runs the automatic check on every
point instead and then computes, with `colengths_at`, whatever colength the engine did not
need (it computes none for a presentation the points refute) — to tabulate the number of
solutions at every level, at the price of a Gröbner basis each.  These colengths are
computed in the scan's own process after the check (under the same --case-timeout and
--case-memory, in a forked child when a limit is given), at the check's specialisation.

Store.  Every (case, point) is one row of the results store, under the settings of a sweep of
the reference and the file with the point's values (compare/store.py), plus the colength
mode; a scan run again takes finished rows from the store.  Cases run in worker processes
with the limits and progress display of sweeps (compare/sweep.py).

Order.  By default every case × point is computed.  `narrow` goes through the cases from
small to large and drops a point as soon as it disagrees; `first` goes through the points in
grid order and stops at the first that agrees on every case (a point stops at its first
disagreeing case).
"""
from __future__ import annotations

import itertools
import time
from dataclasses import dataclass, field, replace
from typing import Callable, Dict, List, Optional, Sequence, Tuple

from ringmatch.errors import UsageError
from ringmatch.presentations.flagtype import FlagType

from . import limited, store
from .cases import CaseTask, Source, case_order, family_of, load_sources, unsupported_reasons
from .records import CaseResult
from .sweep import needs_computing
from .workers import Limits, run_local

DEFAULT_MAX_GRID = 5000        # grid points × cases a scan takes without --max-grid
VERDICTS = ("agree", "consistent", "inconclusive", "disagree")

Point = Tuple[Tuple[str, int], ...]    # the varied parameters' values, in axis order


@dataclass(frozen=True)
class Axis:
    name: str
    values: Tuple[int, ...]


@dataclass
class ScanPlan:
    name: str                            # the file as the user named it
    reference: Source
    raw: bytes
    spec: object                         # userfile.container.FileSpec
    fixed: Dict[str, int]                # --set values (not varied)
    axes: List[Axis]
    points: List[Point]
    flags: List[FlagType]
    skipped: List[Tuple[str, str]]
    settings: dict                       # seed, prime, equivariant, order (None: the
                                         # engine's), trials, colengths

    def values(self, point: Point) -> Dict[str, int]:
        """Every parameter's value at this point (varied, fixed and defaults)."""
        from ringmatch.presentations import userfile
        return userfile.bind_values(self.spec, {**self.fixed, **dict(point)})

    def source(self, point: Point) -> Source:
        return Source(self.name, self.raw, tuple(self.values(point).items()))

    def sources(self, point: Point) -> Tuple[Source, Source]:
        return (self.reference, self.source(point))

    def family_name(self, point: Point) -> str:
        return family_of(self.source(point)).name

    def store_settings(self, point: Point) -> dict:
        s = self.settings
        settings = store.sweep_settings([source.record() for source in self.sources(point)],
                                        equivariant=s["equivariant"], seed=s["seed"],
                                        prime=s["prime"], order=s["order"], trials=s["trials"],
                                        method="auto")
        settings["scan"] = {"colengths": "all" if s["colengths"] else "unless refuted"}
        return settings

    def task(self, flag: FlagType, point: Point, method: str) -> CaseTask:
        s = self.settings
        return CaseTask(flag.name, self.sources(point), s["seed"], s["prime"], s["equivariant"],
                        s["order"], s["trials"], method)


@dataclass
class ScanOutcome:
    plan: ScanPlan
    results: Dict[Tuple[str, Point], dict] = field(default_factory=dict)   # (case, point) → record
    dropped: Dict[Point, str] = field(default_factory=dict)    # narrow/first: point → at which case
    stopped_at: Optional[Point] = None                         # first: the agreeing point
    from_store: int = 0
    computed: int = 0
    wall: float = 0.0

    def record(self, flag: FlagType, point: Point) -> Optional[dict]:
        return self.results.get((flag.name, point))

    def agreeing(self, flag: FlagType) -> List[Point]:
        return [p for p in self.plan.points
                if (self.record(flag, p) or {}).get("verdict") == "agree"]

    def agreeing_everywhere(self) -> List[Point]:
        """Points that agree on every case of the scan (all of them computed)."""
        return [p for p in self.plan.points
                if all((self.record(f, p) or {}).get("verdict") == "agree"
                       for f in self.plan.flags)]


# ---------------------------------------------------------------------------------------
# The grid

def parse_axis(text: str) -> Tuple[str, Tuple[int, ...]]:
    """`NAME=V1,V2,…` or `NAME=LOW..HIGH` (argparse type of --vary)."""
    import argparse
    import re
    match = re.fullmatch(r"\s*([A-Za-z][A-Za-z0-9]*(?:_[0-9]+)?)\s*=\s*(.+?)\s*", text)
    if not match:
        raise argparse.ArgumentTypeError(f"{text!r}: expected NAME=V1,V2,… or NAME=LOW..HIGH")
    name, body = match.group(1), match.group(2)
    span = re.fullmatch(r"([+-]?[0-9]{1,7})\s*\.\.\s*([+-]?[0-9]{1,7})", body)
    if span:
        low, high = int(span.group(1)), int(span.group(2))
        if high < low:
            raise argparse.ArgumentTypeError(f"{text!r}: empty range {low}..{high}")
        if high - low >= 100_000:
            raise argparse.ArgumentTypeError(f"{text!r}: more than 100000 values")
        return name, tuple(range(low, high + 1))
    items = [t.strip() for t in body.split(",")]
    if not all(re.fullmatch(r"[+-]?[0-9]{1,7}", t) for t in items):
        raise argparse.ArgumentTypeError(f"{text!r}: values must be integers (at most 7 digits), "
                                         "listed with commas or as LOW..HIGH")
    values = tuple(int(t) for t in items)
    if len(set(values)) != len(values):
        raise argparse.ArgumentTypeError(f"{text!r}: a value is listed twice")
    return name, values


def grid_axes(spec, fixed: Dict[str, int], vary: Sequence[Tuple[str, Tuple[int, ...]]],
              steps: int = 0) -> List[Axis]:
    """One axis per declared parameter not fixed by --set; a per-step parameter is one axis
    whose value every step takes, or with `steps` > 0 one axis per step a_1 … a_steps.
    --vary restricts an axis to listed values (checked against the declaration)."""
    from ringmatch.presentations import userfile
    declared = {p.name: p for p in spec.parameters}
    for p in spec.parameters:
        if p.per_step and steps:
            declared.update({f"{p.name}_{i}": p for i in range(1, steps + 1)})
            del declared[p.name]
    restricted: Dict[str, Tuple[int, ...]] = {}
    for name, values in vary:
        if name not in declared:
            raise UsageError(f"--vary {name}: {spec.name} has no parameter {name} (it declares "
                             f"{', '.join(declared) or 'none'})")
        if name in restricted:
            raise UsageError(f"--vary {name}: given twice")
        if name in fixed:
            raise UsageError(f"--vary {name} and --set {name}: vary it or fix it, not both")
        for value in values:
            userfile.bind_values(spec, {**fixed, name: value})   # raises file:line:col if outside
        restricted[name] = values
    axes = []
    for p in spec.parameters:
        names = [f"{p.name}_{i}" for i in range(1, steps + 1)] if p.per_step and steps \
            else [p.name]
        for name in names:
            if name in fixed or p.name in fixed or (
                    p.per_step and not steps and any(k.startswith(p.name + "_") for k in fixed)):
                continue
            axes.append(Axis(name, restricted.get(name, p.values)))
    return axes


def grid_points(axes: Sequence[Axis]) -> List[Point]:
    return [tuple(zip((a.name for a in axes), values))
            for values in itertools.product(*(a.values for a in axes))]


def grid_size(axes: Sequence[Axis]) -> int:
    size = 1
    for axis in axes:
        size *= len(axis.values)
    return size


def point_text(point: Point) -> str:
    return ", ".join(f"{k}={v}" for k, v in point) or "(no parameters)"


def plan_scan(name: str, flags: Sequence[FlagType], *, reference: str = "whitney",
              fixed: Optional[Dict[str, int]] = None,
              vary: Sequence[Tuple[str, Tuple[int, ...]]] = (), seed: int = 0,
              prime: Optional[int] = None, equivariant: bool = True,
              order: Optional[int] = None,
              trials: int = 1, colengths: bool = False, per_step: bool = False,
              max_grid: int = DEFAULT_MAX_GRID) -> ScanPlan:
    """Everything checked before any computation: the file, the values, the grid's size."""
    from ringmatch.presentations import userfile
    from . import algebra
    fixed = dict(fixed or {})
    spec = userfile.spec_of(name)
    if spec is None:
        raise UsageError(f"{name}: scan takes a presentation file with parameters "
                         "([[parameters]], docs/presentation-files.md)")
    if not spec.parameters:
        raise UsageError(f"{name}: the file declares no parameters; nothing to scan "
                         "(use check or sweep)")
    for key in fixed:
        if not userfile.accepts(spec, key):
            raise UsageError(f"--set {key}={fixed[key]}: {spec.name} has no such parameter "
                             f"(it declares {', '.join(userfile.declared_names(spec))})")
    # Any one grid point, so that parameters without a default can be read at all.
    probe_values = {**{p.name: p.values[0] for p in spec.parameters}, **fixed}
    userfile.bind_values(spec, probe_values)
    axes = grid_axes(spec, fixed, vary, max((f.m for f in flags), default=1) if per_step else 0)
    size = grid_size(axes)
    # Estimated before anything is built or written: the product can be astronomically large.
    if size * max(1, len(flags)) > max_grid:
        raise UsageError(f"the scan has {size} grid point(s) × {len(flags)} case(s) = "
                         f"{size * len(flags)} checks, more than the limit {max_grid}; narrow "
                         "it with --vary/--set or fewer cases, or raise --max-grid")
    reference_source, file_source = load_sources([reference, name], probe_values)
    points = grid_points(axes)
    plan = ScanPlan(name, reference_source, file_source.raw, spec, fixed, axes, points, [], [],
                    {"seed": int(seed), "prime": int(prime or algebra.DEFAULT_PRIME),
                     "equivariant": bool(equivariant),
                     "order": None if order is None else int(order),
                     "trials": int(trials), "colengths": bool(colengths)})
    probe = plan.sources(points[0])
    for flag in sorted(flags, key=case_order):
        reasons = unsupported_reasons(flag, probe)
        if reasons:
            plan.skipped.append((flag.name, "; ".join(reasons)))
        else:
            plan.flags.append(flag)
    # Expanding the file once per case here turns a broken file into one located line
    # before the store is touched, instead of a stored error per case and point.
    for flag in plan.flags:
        family_of(probe[1]).generators(flag)
    return plan


# ---------------------------------------------------------------------------------------
# Running

def point_record(plan: ScanPlan, flag: FlagType, point: Point, result: CaseResult,
                 refuted: bool, seconds: float) -> dict:
    """What the scan reports of one case at one point (from a check result)."""
    name = plan.family_name(point)
    report = result.presentations.get(name)
    record = {"case": flag.name, "rank": flag.rank, "values": dict(point),
              "colength": report and report.colength,
              "classical_colength": report and report.classical_colength,
              "holds": report and report.holds,
              "verdict": result.verdict, "reason": result.reason,
              "refuted_by_points": refuted, "seconds": round(float(seconds), 3)}
    if report is not None:
        record["holds_evidence"] = report.holds_evidence
        record["holds_to_order"] = report.holds_to_order
    if result.decided:
        record["exact"] = result.exact
    note = (result.scan or {}).get("colengths")
    if note:
        record["colengths_note"] = note
    return record


def refuted_at_points(plan: ScanPlan, point: Point, result: CaseResult) -> bool:
    """Whether a relation (or a declared unit) of the file fails at a Bethe point — an exact
    refutation, as the engine's `points_status` reads it."""
    report = result.presentations.get(plan.family_name(point))
    return report is not None and report.holds is False and bool(report.failures)


def refutation(result: CaseResult, plan: ScanPlan, point: Point) -> CaseResult:
    """A points-only result that disagrees (the engine's verdict, from a relation failing at
    a Bethe point), marked as the scan stores it: no Gröbner basis, no colengths."""
    name = plan.family_name(point)
    witness = next((p.reason for p in result.pairs if p.verdict == "disagree"), None)
    report = result.presentations.get(name)
    relation = report.failures[0].relation if report is not None and report.failures else None
    reason = (witness or f"{name}: " + (f"{relation} does not vanish" if relation else
                                        "some relations do not vanish")
              + " at a Bethe point") + " (no Gröbner basis computed)"
    return replace(result, reason=reason, scan={"refuted_by_points": True})


def colengths_at(family, flag: FlagType, *, seed: int, prime: int, equivariant: bool,
                 fixed_points_ok: bool = False, quantum: bool = True,
                 classical: bool = True) -> dict:
    """The colength (units inverted) of the family at the specialisation a check with this
    seed and prime uses (its first trial), and the classical colength (q = 0): the numbers
    the engine leaves out for a presentation the Bethe points refute.  Each is an int or
    "infinite"; a Gröbner basis each (compare.engine.colength_with_units).  `quantum` /
    `classical` False leave that one out (None)."""
    from . import algebra, engine
    spec = algebra.draw_specialisation(flag.n, flag.m, seed=seed, prime=prime,
                                       equivariant=equivariant)
    out = {"colength": None, "colength_method": None,
           "classical_colength": None, "classical_method": None}
    if quantum:
        out["colength"], out["colength_method"] = engine.colength_with_units(
            family, flag, spec, None)
    if classical:
        out["classical_colength"], out["classical_method"] = engine.colength_with_units(
            family, flag, engine.classical(spec),
            "the fixed points" if fixed_points_ok else None)
    return out


def missing_colengths(plan: ScanPlan, point: Point, result: CaseResult) -> bool:
    report = result.presentations.get(plan.family_name(point))
    return report is not None and (report.colength is None
                                   or report.classical_colength is None)


def with_colengths(plan: ScanPlan, flag: FlagType, point: Point, result: CaseResult,
                   limits: Limits) -> CaseResult:
    """The check result with the file's missing colengths computed (`colengths_at`, at the
    check's seed and prime, under the scan's limits); a colength the check computed is
    kept.  A limit that stops the computation leaves them missing and says so."""
    if not missing_colengths(plan, point, result):
        return result
    name = plan.family_name(point)
    report = result.presentations[name]
    certificate = result.certificate
    family = family_of(plan.source(point))

    def work() -> dict:
        return colengths_at(family, flag, seed=certificate.seed, prime=certificate.prime,
                            equivariant=result.equivariant,
                            fixed_points_ok=bool(report.fixed_points_ok),
                            quantum=report.colength is None,
                            classical=report.classical_colength is None)

    try:
        computed = limited.run_limited(work, seconds=limits.seconds,
                                       memory_mib=limits.memory_mib)
    except Exception as error:      # stored with the point, like a case's error in a sweep
        computed = limited.Stopped(f"error: {type(error).__name__}: {error}")
    new = replace(report)
    if isinstance(computed, limited.Stopped):
        note = f"colengths not computed: {computed.reason}"
    else:
        note = "computed by the scan (--colengths) at the check's specialisation"
        for key, method in (("colength", "colength_method"),
                            ("classical_colength", "classical_method")):
            if getattr(new, key) is None:
                setattr(new, key, computed[key])
                setattr(new, method,
                        computed[method] + " (by the scan: the check did not need it)")
    scan = dict(result.scan or {}, colengths=note)
    if isinstance(computed, limited.Stopped):
        scan["colength_limits"] = limits.record()
    return replace(result, presentations={**result.presentations, name: new}, scan=scan)


def colengths_again(row: dict, limits: Limits) -> bool:
    """A stored point whose colengths a limit (or an error) stopped is computed again under
    other limits, as a sweep does with a case that ran into a limit."""
    scan_note = row["result"].scan or {}
    return "colength_limits" in scan_note and scan_note["colength_limits"] != limits.record()


def evaluate(plan: ScanPlan, items: Sequence[Tuple[FlagType, Point]], outcome: ScanOutcome,
             conn, *, workers: int, limits: Limits,
             progress: Optional[Callable] = None, run_command: Optional[str] = None) -> None:
    """Compute (or take from the store) every (case, point) of `items` into `outcome`."""
    todo: List[Tuple[FlagType, Point]] = []
    for flag, point in items:
        if (flag.name, point) in outcome.results:
            continue
        row = store.stored_rows(conn, plan.store_settings(point)).get(flag.name)
        if row is not None and not needs_computing(row, limits) and \
                not colengths_again(row, limits):
            result = row["result"]
            outcome.results[(flag.name, point)] = point_record(
                plan, flag, point, result, bool((result.scan or {}).get("refuted_by_points")),
                row["seconds"])
            outcome.from_store += 1
        else:
            todo.append((flag, point))
    if not todo:
        return
    run = store.run_record(run_command)
    started = time.monotonic()
    done = [0]
    total = len(todo)

    def save(flag: FlagType, point: Point, result: CaseResult, seconds: float, refuted: bool):
        if result.decided:
            result = replace(result, scan=dict(result.scan or {}, refuted_by_points=refuted))
        store.save_result(conn, plan.store_settings(point), result, seconds, run=run)
        outcome.results[(flag.name, point)] = point_record(plan, flag, point, result, refuted,
                                                           seconds)
        outcome.computed += 1
        done[0] += 1
        if progress:
            progress(done[0], total, time.monotonic() - started,
                     f"{flag.name} {point_text(point)}")

    if progress:
        progress(0, total, 0.0, "")
    second: List[Tuple[FlagType, Point]] = []
    if plan.settings["colengths"]:
        second = list(todo)
    else:
        def after_points(index: int, result: CaseResult, seconds: float):
            flag, point = todo[index]
            if not result.decided:
                save(flag, point, result, seconds, False)     # a limit or an error: as is
            elif result.verdict == "disagree" and refuted_at_points(plan, point, result):
                save(flag, point, refutation(result, plan, point), seconds, True)
            else:
                second.append((flag, point))
            return None

        run_local([(i, plan.task(f, p, "points")) for i, (f, p) in enumerate(todo)], limits,
                  workers, after_points)

    def after_full(index: int, result: CaseResult, seconds: float):
        flag, point = second[index]
        if plan.settings["colengths"] and missing_colengths(plan, point, result):
            begun = time.monotonic()
            result = with_colengths(plan, flag, point, result, limits)
            seconds += time.monotonic() - begun
        save(flag, point, result, seconds, refuted_at_points(plan, point, result))
        return None

    if second:
        run_local([(i, plan.task(f, p, "auto")) for i, (f, p) in enumerate(second)], limits,
                  workers, after_full)


def run_scan(plan: ScanPlan, store_path, *, mode: str = "all", workers: int = 1,
             limits: Limits = Limits(), progress: Optional[Callable] = None,
             command: Optional[str] = None) -> ScanOutcome:
    """mode: "all" (every case × point), "narrow" (cases small to large, a point dropped at
    its first disagreement), "first" (points in grid order, stop at the first that agrees on
    every case), "first-narrow" (both)."""
    outcome = ScanOutcome(plan)
    started = time.monotonic()
    conn = store.open_store(store_path)
    kwargs = dict(workers=workers, limits=limits, progress=progress, run_command=command)
    claimed = False
    try:
        # one sweep or scan at a time per store: two would both compute every case
        store.claim(conn, command)
        claimed = True
        if mode == "all":
            evaluate(plan, [(f, p) for f in plan.flags for p in plan.points], outcome, conn,
                     **kwargs)
        elif mode == "narrow":
            alive = list(plan.points)
            for flag in plan.flags:
                evaluate(plan, [(flag, p) for p in alive], outcome, conn, **kwargs)
                for point in alive:
                    if outcome.record(flag, point)["verdict"] == "disagree":
                        outcome.dropped[point] = flag.name
                alive = [p for p in alive if p not in outcome.dropped]
                if not alive:
                    break
        elif mode in ("first", "first-narrow"):
            for point in plan.points:
                if mode == "first":
                    evaluate(plan, [(f, point) for f in plan.flags], outcome, conn, **kwargs)
                else:
                    for flag in plan.flags:
                        evaluate(plan, [(flag, point)], outcome, conn, **kwargs)
                        if outcome.record(flag, point)["verdict"] == "disagree":
                            outcome.dropped[point] = flag.name
                            break
                if all((outcome.record(f, point) or {}).get("verdict") == "agree"
                       for f in plan.flags):
                    outcome.stopped_at = point
                    break
        else:
            raise ValueError(f"unknown scan mode {mode!r}")
    finally:
        if claimed:
            store.release(conn)
        conn.close()
    outcome.wall = time.monotonic() - started
    return outcome


# ---------------------------------------------------------------------------------------
# Results

def outcome_json(outcome: ScanOutcome, store_path=None) -> dict:
    plan = outcome.plan
    points = [outcome.results[(f.name, p)] for f in plan.flags for p in plan.points
              if (f.name, p) in outcome.results]
    everywhere = outcome.agreeing_everywhere()
    return {
        "presentation": plan.name,
        "file_name": plan.spec.name,
        "reference": family_of(plan.reference).name,
        "parameters": [a.name for a in plan.axes],
        "fixed": dict(plan.fixed),
        "axes": {a.name: list(a.values) for a in plan.axes},
        "cases": [f.name for f in plan.flags],
        "points": points,
        "agreeing": {f.name: [dict(p) for p in outcome.agreeing(f)] for f in plan.flags},
        "agreeing_everywhere": [dict(p) for p in everywhere],
        "agrees_up_to_rank": max((f.rank for f in plan.flags), default=None)
        if everywhere else None,
        "dropped": [{"values": dict(p), "at": case} for p, case in outcome.dropped.items()],
        "stopped_at": dict(outcome.stopped_at) if outcome.stopped_at is not None else None,
        "skipped": [{"case": c, "reason": r} for c, r in plan.skipped],
        "settings": plan.settings,
        "from_store": outcome.from_store,
        "computed": outcome.computed,
        "store": None if store_path is None else str(store_path),
    }

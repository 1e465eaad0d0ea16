"""The build: a small registry of stages, run in order, each skipped with a reason when its inputs are absent.

A stage declares what it ``needs`` and what it ``provides``.  A need is either a
section of the project file (``"settings:dem"``: present when the section is given)
or an artefact another stage provides (``"line"``).  :func:`build` runs every
registered stage in registration order; one whose needs are not met is skipped and
the reason goes to the report and the terminal.  Stages write their files through
:meth:`Context.output` (atomic: temporary file, then rename).
"""

from __future__ import annotations

import sys
import time
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Callable, Iterable, Iterator

from .config import Settings
from .report import Report

__all__ = ["Stage", "Context", "Progress", "register", "stages", "build", "BuildResult", "run_stages"]


class Progress:
    """Progress display on standard error: one line per step; counters redraw in place on a terminal."""

    def __init__(self, stream=None, quiet: bool = False):
        self.stream = stream if stream is not None else sys.stderr
        self.quiet = quiet
        self.tty = hasattr(self.stream, "isatty") and self.stream.isatty()

    def say(self, text: str) -> None:
        if not self.quiet:
            print(text, file=self.stream, flush=True)

    def counter(self, total: int, label: str) -> "_Counter":
        """A counter to advance by hand: ``c = progress.counter(n, "shots"); c.add(k); ...; c.done()``."""
        return _Counter(self, total, label)

    def iter(self, items: Iterable[Any], total: int, label: str) -> Iterator[Any]:
        """Yield ``items`` while showing ``label  k/total``."""
        t0 = time.perf_counter()
        last = -1.0
        for k, item in enumerate(items, 1):
            yield item
            now = time.perf_counter()
            if self.quiet:
                continue
            if self.tty and (now - last > 0.2 or k == total):
                print(f"\r    {label} {k}/{total} ({now - t0:.1f} s)", end="", file=self.stream, flush=True)
                last = now
            elif not self.tty and (k == total or (total >= 10 and k % max(1, total // 10) == 0)):
                print(f"    {label} {k}/{total} ({now - t0:.1f} s)", file=self.stream, flush=True)
        if self.tty and not self.quiet and total:
            print(file=self.stream, flush=True)


class _Counter:
    def __init__(self, progress: Progress, total: int, label: str):
        self.p, self.total, self.label = progress, total, label
        self.k = 0
        self.t0 = time.perf_counter()
        self.last = -1.0
        self.next_line = max(1, total // 10)

    def add(self, n: int = 1) -> None:
        self.k += n
        p = self.p
        if p.quiet:
            return
        now = time.perf_counter()
        if p.tty and (now - self.last > 0.2 or self.k >= self.total):
            print(f"\r    {self.label} {self.k}/{self.total} ({now - self.t0:.1f} s)", end="", file=p.stream,
                  flush=True)
            self.last = now
        elif not p.tty and (self.k >= self.next_line or self.k >= self.total):
            print(f"    {self.label} {self.k}/{self.total} ({now - self.t0:.1f} s)", file=p.stream, flush=True)
            while self.next_line <= self.k:
                self.next_line += max(1, self.total // 10)

    def done(self) -> None:
        if self.p.tty and not self.p.quiet and self.total:
            print(file=self.p.stream, flush=True)


@dataclass
class Context:
    """What stages share during one build."""

    settings: Settings
    out_dir: Path
    report: Report
    progress: Progress
    artefacts: dict[str, Any] = field(default_factory=dict)
    written: list[Path] = field(default_factory=list)

    def output(self, name: str) -> Path:
        """The path of an output file (inside the output folder only); records it as written."""
        p = (self.out_dir / name).resolve()
        if self.out_dir.resolve() not in p.parents:
            raise ValueError(f"output {name!r} would leave the output folder")
        if p not in self.written:
            self.written.append(p)
        return p

    def has(self, need: str) -> bool:
        if need.startswith("settings:"):
            value = getattr(self.settings, need.split(":", 1)[1])
            return bool(value) if isinstance(value, list) else value is not None
        return self.artefacts.get(need) is not None


@dataclass(frozen=True)
class Stage:
    name: str
    title: str
    run: Callable[[Context], None]
    needs: tuple[str, ...] = ()
    provides: tuple[str, ...] = ()
    in_check: bool = False  # also run by `geosect check` (reading and validating stages)


_REGISTRY: list[Stage] = []


def register(name: str, title: str, *, needs: Iterable[str] = (), provides: Iterable[str] = (),
             in_check: bool = False) -> Callable[[Callable[[Context], None]], Callable[[Context], None]]:
    """Decorator adding a stage function to the build, in order of registration."""

    def deco(fn: Callable[[Context], None]) -> Callable[[Context], None]:
        global _REGISTRY
        _REGISTRY = [s for s in _REGISTRY if s.name != name]
        _REGISTRY.append(Stage(name, title, fn, tuple(needs), tuple(provides), in_check))
        return fn

    return deco


def stages() -> list[Stage]:
    """The registered stages in build order (importing :mod:`geosect.stages` registers them)."""
    from . import stages as _stages  # noqa: F401  (registers)

    return list(_REGISTRY)


def _missing_reason(ctx: Context, stage: Stage, skipped: dict[str, str]) -> str | None:
    for need in stage.needs:
        if ctx.has(need):
            continue
        if need.startswith("settings:"):
            sect = need.split(":", 1)[1]
            return f"no [{sect}] section in the project file"
        producer = next((s for s in _REGISTRY if need in s.provides), None)
        if producer is not None and producer.name in skipped:
            return f"needs {need!r} from stage '{producer.name}', which was skipped ({skipped[producer.name]})"
        if producer is not None:
            return f"needs {need!r}, which stage '{producer.name}' had nothing to make from"
        return f"needs {need!r}, which no stage produces"
    return None


@dataclass
class BuildResult:
    context: Context
    ran: list[str]
    skipped: dict[str, str]
    seconds: dict[str, float]


def run_stages(ctx: Context, selected: list[Stage]) -> BuildResult:
    ran: list[str] = []
    skipped: dict[str, str] = {}
    seconds: dict[str, float] = {}
    n = len(selected)
    for i, st in enumerate(selected, 1):
        reason = _missing_reason(ctx, st, skipped)
        if reason is not None:
            skipped[st.name] = reason
            ctx.progress.say(f"[{i}/{n}] {st.title}: skipped ({reason})")
            continue
        ctx.progress.say(f"[{i}/{n}] {st.title}")
        t0 = time.perf_counter()
        st.run(ctx)
        seconds[st.name] = time.perf_counter() - t0
        ran.append(st.name)
    return BuildResult(ctx, ran, skipped, seconds)


def build(settings: Settings, out_dir: Path | None = None, *, progress: Progress | None = None,
          only_check: bool = False) -> BuildResult:
    """Run every stage the project asks for; write outputs and ``report.md`` into ``out_dir``."""
    from .io.atomic import write_text

    out_dir = Path(out_dir) if out_dir is not None else settings.output_dir
    progress = progress or Progress()
    report = Report(f"{settings.project.name}: QC report")
    ctx = Context(settings, out_dir, report, progress)
    all_stages = stages()
    selected = [s for s in all_stages if s.in_check] if only_check else all_stages
    if not only_check:
        out_dir.mkdir(parents=True, exist_ok=True)
    result = run_stages(ctx, selected)
    sec = report.section("Build")
    sec.table(["stage", "result", "seconds"],
              [(s.name, "done" if s.name in result.ran else f"skipped: {result.skipped.get(s.name, '')}",
                f"{result.seconds.get(s.name, 0):.2f}") for s in selected])
    if not only_check:
        rep = ctx.output("report.md")
        write_text(rep, report.render())
    return result

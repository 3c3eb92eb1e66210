"""The pipeline: plan every route × rider and write its pages into a temporary folder
beside the output (a route's plans stay in the worker that made them), then render
the cards there and publish it in one step.

A failed build publishes nothing and leaves the previous site as it was. A lock file
beside the output stops two builds writing into one folder. A manifest of content
hashes (inputs, configuration, templates, cardgen version) lets a rebuild reuse every
route whose inputs did not change, and skip the whole build when nothing did.
"""

from __future__ import annotations

import contextlib
import itertools
import json
import os
import resource
import shutil
import signal
import threading
import time
import zlib
from collections.abc import Callable, Iterable, Iterator, Mapping
from concurrent.futures import ProcessPoolExecutor
from concurrent.futures.process import BrokenProcessPool
from dataclasses import dataclass, field, replace
from pathlib import Path

from cardgen import __version__
from cardgen.build.cache import digest, file_digest, read_manifest, templates_digest, write_manifest
from cardgen.build.publish import TMP, BuildError, Lock, check_output, publish, recover, side_name
from cardgen.config import plural
from cardgen.errors import CardgenError
from cardgen.io.gpx import MAX_FILE_BYTES
from cardgen.paths import default_templates
from cardgen.settings import SiteConfig


class Interrupted(KeyboardInterrupt):
    """Ctrl-C during a build, with a true sentence about what was published."""

    def __init__(self, message: str):
        super().__init__(message)
        self.message = message


@dataclass
class BuildReport:
    routes: int = 0
    routes_reused: int = 0
    cards_rendered: int = 0
    cards_reused: int = 0
    up_to_date: bool = False
    layouts: int = 0  # WeasyPrint layouts made for the cards rendered
    failed: list[str] = field(default_factory=list)
    seconds: dict[str, float] = field(default_factory=dict)  # wall time of each phase
    cpu: dict[str, float] = field(default_factory=dict)  # CPU time of each phase, workers included


def _cpu() -> float:
    """CPU seconds used so far by this process and its ended workers (a phase's pools
    are shut down when it ends, so the difference over a phase includes its workers)."""
    own, kids = resource.getrusage(resource.RUSAGE_SELF), resource.getrusage(resource.RUSAGE_CHILDREN)
    return own.ru_utime + own.ru_stime + kids.ru_utime + kids.ru_stime


@dataclass
class _Route:
    """A route of the configuration on its way through the build."""

    config: object  # RouteConfig
    slug: str
    key: str
    starts: dict = field(default_factory=dict)  # rider index → Start on this route
    summary: dict | None = None  # once planned and its pages written
    cards: list = field(default_factory=list)  # PackedCard, once planned


def build_site(
    config: SiteConfig,
    out: Path,
    *,
    jobs: int = 1,
    pdf: bool = True,
    keep_going: bool = False,
    say: Callable[[str], None] = lambda text: None,
    progress=None,
) -> BuildReport:
    """Build the site of ``config`` into ``out``. ``say`` receives one line per step;
    ``progress(done, total, label)`` is called as cards are rendered."""
    out = check_output(out, list(config.inputs), config.templates)
    report = BuildReport()
    with Lock(out), _ctrl_c() as ctrl_c:
        for line in recover(out):
            say(line)
        return _build_locked(config, out, jobs, pdf, keep_going, say, progress, report, ctrl_c)


class _CtrlC:
    """Whether Ctrl-C (SIGINT) came during a build, remembered: Python raises its
    KeyboardInterrupt wherever the main thread is, and one raised inside a weakref
    callback or a ``__del__`` (the XML parser's, a library's) is printed and dropped,
    so the build ran on and published. :meth:`check` raises it again at the build's
    phase boundaries, before anything is published."""

    def __init__(self) -> None:
        self.seen = False

    def handler(self, signum, frame) -> None:
        self.seen = True
        signal.default_int_handler(signum, frame)

    def check(self) -> None:
        if self.seen:
            raise KeyboardInterrupt


@contextlib.contextmanager
def _ctrl_c() -> Iterator[_CtrlC]:
    """A :class:`_CtrlC` for one build, its handler in place when the build runs in the
    main thread with Python's own Ctrl-C handling (not where SIGINT is ignored, nor
    beside another handler); the one before comes back after."""
    ctrl_c = _CtrlC()
    before = signal.getsignal(signal.SIGINT)
    if threading.current_thread() is not threading.main_thread() or before is not signal.default_int_handler:
        yield ctrl_c
        return
    signal.signal(signal.SIGINT, ctrl_c.handler)
    try:
        yield ctrl_c
    finally:
        signal.signal(signal.SIGINT, before)


#: Cards one worker process renders before it is replaced (bounds its memory).
CARDS_PER_WORKER = 40


def _pool(jobs: int, tasks: int):
    """A process pool when it pays (jobs > 1 and more than one task), else a stand-in
    that runs in this process."""
    if jobs > 1 and tasks > 1:
        return ProcessPoolExecutor(max_workers=min(jobs, tasks))
    return contextlib.nullcontext(None)


def _map(pool, function, items: Iterable, what: str = "a worker process") -> Iterator:
    """``pool.map``, or plain ``map`` without a pool, yielding results in order; a dead
    worker is a clear error."""
    if pool is None:
        yield from map(function, items)
        return
    try:
        yield from pool.map(function, items)
    except BrokenProcessPool:
        raise BuildError(
            f"{what} died (out of memory, or killed); nothing was published; " "try again with --jobs 1"
        ) from None


def _plan_route(task):
    """Worker: read, analyse and plan one route for its riders.

    Returns (RouteJob, None) or (None, error message naming the file)."""
    from cardgen.io.gpx import read_gpx
    from cardgen.plan import plan_route
    from cardgen.plan.model import Entry
    from cardgen.plan.views import route_job
    from cardgen.units import ZERO_CELSIUS_K

    route, config, starts = task  # starts: rider index → Start on this route
    rc = route.config
    try:
        track = read_gpx(rc.gpx)
        riding = [(i, r) for i, r in enumerate(config.riders) if i in starts]
        planned = plan_route(
            track,
            [r.rider for _, r in riding],
            config.conditions,
            cue_texts=rc.cue_texts,
            checkpoints=rc.checkpoints,
            stops=rc.stops,
            stop=rc.stop,
            feeds=rc.feeds,
            marshals=rc.marshals,
            where=str(rc.gpx),
            light=True,
        )
        riders = tuple(
            Entry(r.rider.name, starts[i].at, starts[i].wave, plan, r.bib)
            for (i, r), plan in zip(riding, planned.plans, strict=True)
        )
        temperature = config.conditions.temperature
        job = route_job(
            route.slug,
            rc.name or track.name,
            rc.notes,
            planned,
            riders,
            config.checkpoint_margin,
            config.speed_rule,
            None if temperature is None else temperature - ZERO_CELSIUS_K,
        )
        return job, None
    except CardgenError as exc:
        return None, (f"{rc.gpx}: {exc}" if str(rc.gpx) not in str(exc) else str(exc))


def _render_route(task):
    """Worker: pages, plots and exports of one route; returns (summary, cards)."""
    from cardgen.render.pages import render_route

    config, site, job, folder = task
    pages = render_route(config, site, job, Path(folder))
    write_files(Path(folder), pages.files)
    return pages.summary, pages.cards


def _plan_and_write_route(task):
    """Worker: plan one route (:func:`_plan_route`), then write its pages, plots and
    exports into its folder of the temporary site (:func:`_render_route`). The plans
    stay in this process and end with it: only the route's summary and its cards,
    packed (:class:`PackedCard`), come back (a route's plans are about 0.7 MB per rider
    on 160 km, half a gigabyte for a 1,000-rider route, too much to send between
    processes and keep for the whole build).

    Returns (name, riders, summary, packed cards), or the error message (str)."""
    route, config, starts, site, folder = task
    job, error = _plan_route((route, config, starts))
    if error is not None:
        return error
    summary, cards = _render_route((config, site, job, folder))
    return job.name, len(job.riders), summary, [PackedCard.of(c) for c in cards]


@dataclass(frozen=True)
class PackedCard:
    """A card on its way to the PDF: its HTML variants compressed (zlib; a 160 km
    card's six variants are some 200 KB in memory, 600 MB for 3,000 riders, and
    about a tenth of that packed), and its key (:func:`card_key`)."""

    base: str
    target: str
    budget: int
    group: str
    key: str
    blob: bytes  # zlib of the JSON [html, [variants], [parts]]
    parts: int = 0  # layout parts (a long coach sheet's), 0 for a card laid out whole

    @classmethod
    def of(cls, card) -> PackedCard:
        """``card`` (a :class:`~cardgen.render.pages.CardSource` whose drawings are
        written) packed."""
        text = json.dumps([card.html, list(card.variants), list(card.parts)], ensure_ascii=False)
        return cls(
            card.base,
            card.target,
            card.budget,
            card.group,
            card_key(card),
            zlib.compress(text.encode(), 1),
            len(card.parts),
        )

    @property
    def source(self):
        """The card as rendered (:class:`~cardgen.render.pages.CardSource`)."""
        from cardgen.render.pages import CardSource

        html, variants, parts = json.loads(zlib.decompress(self.blob))
        return CardSource(
            html, self.base, self.target, tuple(variants), self.budget, self.group, parts=tuple(parts)
        )


def write_files(folder: Path, files: Mapping[str, str | bytes | Path]) -> None:
    """Write rendered files into ``folder`` by name: text as UTF-8, bytes as they are,
    a path (a theme file) copied."""
    for name, content in files.items():
        target = folder / name
        if isinstance(content, Path):
            shutil.copyfile(content, target)
        elif isinstance(content, bytes):
            target.write_bytes(content)
        else:
            target.write_text(content, encoding="utf-8")


def card_key(card) -> str:
    """What a card's PDF depends on: its HTML and the build's own files it shows
    (the profile drawings, the maps, the QR code: the card's ``assets``), by content."""
    base = Path(card.base)
    used = sorted(set(card.assets))
    return digest(
        card.budget,
        *(card.variants or card.parts or (card.html,)),
        *[(n, file_digest(base / n, MAX_FILE_BYTES)) for n in used if (base / n).is_file()],
    )


class _Batch(list):
    """Cards for one worker, with what the build's fitters learned before
    (``learned``: :attr:`cardgen.render.pdf.Fitter.learned`, by route and kind)."""

    learned: dict = {}


def _render_pdfs(cards) -> tuple[list[str], int, dict, dict[str, int]]:
    """Worker: cards' HTML → PDF files, each the first of its condensed variants that
    fits its page budget (the last one otherwise), by one fitter that learns from the
    cards before, in this batch and (``cards.learned``) in the build's earlier
    batches (:class:`cardgen.render.pdf.Fitter`; a group is a route's folder and a
    vehicle kind). Returns the files, the layouts made, what the fitter learned
    (:meth:`~cardgen.render.pdf.Fitter.news`) and
    the pages of each fitted card's file (by file; the packs' covers number pages
    from them without opening the cards)."""
    from cardgen.render.pages import CONTINUATION_STEP
    from cardgen.render.pdf import Fitter, parts_pdf, pdf_bytes

    fitter = Fitter(getattr(cards, "learned", None))
    pages: dict[str, int] = {}
    for packed in cards:
        card = packed.source if isinstance(packed, PackedCard) else packed
        if card.variants:
            data, _, pages[card.target] = fitter.fit(
                card.variants,
                Path(card.base),
                card.budget,
                (card.base, card.group),
                continued_from=CONTINUATION_STEP,
            )
        elif card.parts:
            data = parts_pdf(card.parts, Path(card.base))
        else:
            data, _ = pdf_bytes(card.html, Path(card.base))
        Path(card.target).write_bytes(data)
    return [c.target for c in cards], fitter.layouts, fitter.news(), pages


def _learn(learned: dict, more: dict) -> None:
    """Add one fitter's ``learned`` to the build's (:func:`cardgen.render.pdf.merge_learned`)."""
    from cardgen.render.pdf import merge_learned

    merge_learned(learned, more)


def _routes(config: SiteConfig, shared: str, starts) -> list[_Route]:
    from cardgen.render.html import slugify

    taken: set[str] = set()
    routes = []
    for k, rc in enumerate(config.routes):
        slug = slugify(rc.name or rc.gpx.stem, taken)
        mine = dict(starts.route_starts(k))
        key = digest(
            shared,
            file_digest(rc.gpx, MAX_FILE_BYTES),
            rc,  # name, notes, checkpoints, its start and stops
            *[(i, config.riders[i], (s.at, s.wave)) for i, s in mine.items()],  # riders with their starts
        )
        routes.append(_Route(rc, slug, key, starts=mine))
    return routes


def _build_locked(config, out, jobs, pdf, keep_going, say, progress, report, ctrl_c):
    t0, c0 = time.perf_counter(), _cpu()
    template_folders = ([config.templates] if config.templates else []) + [default_templates()]
    epoch = os.environ.get("SOURCE_DATE_EPOCH", "")
    shared = digest(
        __version__,
        templates_digest(template_folders),
        config.title,
        config.units,
        config.card_size,
        config.large_print,
        config.base_url,
        config.start,
        config.start_interval,
        config.checkpoint_margin,
        config.speed_rule,
        config.day,
        config.conditions,
        pdf,
        epoch,
    )
    old = read_manifest(out)
    from cardgen.plan.starts import event_starts

    routes = _routes(config, shared, event_starts(config))
    site_key = digest(shared, *[r.key for r in routes], *[r.slug for r in routes])
    report.routes = len(routes)
    if old.get("site_key") == site_key and all((out / r.slug).is_dir() for r in routes):
        report.up_to_date = True
        report.routes_reused = len(routes)
        report.cards_reused = sum(len(v.get("cards", [])) for v in old.get("routes", {}).values())
        say(f"{out}: up to date ({len(routes)} routes, {report.cards_reused} cards unchanged)")
        return report

    # Phase 1: plan every route that changed and write its pages into a temporary
    # folder beside the output (in the process pool when jobs > 1); phase 2: cards,
    # packs, index; then publish it. Nothing is published unless every route planned.
    def reusable(route: _Route) -> bool:
        return (
            old.get("routes", {}).get(route.slug, {}).get("key") == route.key and (out / route.slug).is_dir()
        )

    tmp = side_name(out, TMP)
    shutil.rmtree(tmp, ignore_errors=True)
    tmp.mkdir(parents=True)
    published = False
    try:
        failures = _plan_routes(config, [r for r in routes if not reusable(r)], tmp, jobs, say)
        ctrl_c.check()
        report.seconds["plan"], report.cpu["plan"] = time.perf_counter() - t0, _cpu() - c0
        if failures and (not keep_going or len(failures) == len(routes)):
            why = "every route failed" if keep_going else "the build stopped"
            raise BuildError(
                f"{why}; nothing was published (the previous site is unchanged):"
                + ("\n  " + "\n  ".join(failures) if len(failures) > 1 else " " + failures[0])
            )
        report.failed = failures
        for failure in failures:
            say(f"left out (--keep-going): {failure}")
        manifest = _render(config, routes, old, out, tmp, pdf, progress, report, reusable, jobs)
        manifest["site_key"] = site_key if not failures else ""
        write_manifest(tmp, manifest)
        ctrl_c.check()  # a Ctrl-C a library dropped still stops the build here
        publish(tmp, out)
        published = True
    except KeyboardInterrupt:
        shutil.rmtree(tmp, ignore_errors=True)
        if published:
            raise Interrupted(f"interrupted after the new site was published in {out}") from None
        raise Interrupted("interrupted; nothing was published, the previous output is unchanged") from None
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise
    report.seconds["total"], report.cpu["total"] = time.perf_counter() - t0, _cpu() - c0
    return report


def _plan_routes(config, todo: list[_Route], tmp: Path, jobs: int, say) -> list[str]:
    """Plan each route of ``todo`` and write its pages into its folder in ``tmp``
    (:func:`_plan_and_write_route`), keeping its summary and packed cards on the route.
    Returns the failures (a failed route's folder is removed)."""
    from cardgen.plan.starts import event_starts
    from cardgen.render.pages import built_stamp, site_context

    site = site_context(config, event_starts(config), built_stamp(os.environ.get("SOURCE_DATE_EPOCH")))
    failures = []
    for route in todo:
        (tmp / route.slug).mkdir()
    tasks = [(r, config, r.starts, site, str(tmp / r.slug)) for r in todo]
    # one route too goes to a worker when jobs > 1: its plans then never enter this
    # process, whose memory every card-rendering process starts from (fork)
    with _pool(jobs, len(todo) + 1 if todo else 0) as pool:
        for route, result in zip(todo, _map(pool, _plan_and_write_route, tasks), strict=True):
            if isinstance(result, str):
                failures.append(result)
                shutil.rmtree(tmp / route.slug, ignore_errors=True)
                continue
            name, riders, route.summary, route.cards = result
            say(f"planned {name}: {plural(riders, 'rider')}")
    return failures


def card_batches(cards: list, size: int) -> list[list]:
    """The cards in batches of at most ``size``, each from one route and, within it,
    by vehicle kind: the cards of a batch share their drawings and their fitter learns
    the variant of each kind from the first card of that kind. A route's cards are
    split into batches of nearly one size (100 cards in batches of 40: 34, 33 and 33,
    not 40, 40 and 20), so that the workers of a round, which all wait for its
    longest batch, finish together."""
    by_route: dict[str, list] = {}
    for card in cards:
        by_route.setdefault(card.base, []).append(card)
    batches = []
    for members in by_route.values():
        members.sort(key=lambda c: (getattr(c, "group", ""), c.target))
        count = -(-len(members) // size)
        cuts = [len(members) * k // count for k in range(count + 1)]
        batches += [members[a:b] for a, b in itertools.pairwise(cuts)]
    return batches


def _render_part(task) -> bytes:
    """Worker: one layout part of a card laid out in parts (a long coach sheet), as a
    PDF (:func:`cardgen.render.pdf.pdf_bytes`)."""
    from cardgen.render.pdf import pdf_bytes

    packed, index = task
    card = packed.source
    return pdf_bytes(card.parts[index], Path(card.base))[0]


def _render_parted(cards: list, workers: int, tick) -> None:
    """The cards laid out in parts (long coach sheets), every part of every card in a
    worker of its own (a part is about a third of a 100-rider sheet: laid out alone, a
    changed rider's sheet no longer holds up a rebuild for the whole of it), joined
    here in order (:func:`cardgen.render.pdf.join_parts`, as ``parts_pdf`` joins them:
    the same bytes). Fresh processes for every round of ``workers`` parts."""
    from cardgen.render.pdf import join_parts

    tasks = [(card, i) for card in cards for i in range(card.parts)]
    made: list[bytes] = []
    for start in range(0, len(tasks), workers):
        round_ = tasks[start : start + workers]
        with ProcessPoolExecutor(max_workers=len(round_)) as fresh:
            made += _map(fresh, _render_part, round_, "a card-rendering process")
    for card in cards:
        Path(card.target).write_bytes(join_parts(made[: card.parts]))
        del made[: card.parts]
        tick([card.target])


def _render_cards(cards: list, jobs: int, tmp: Path, progress) -> tuple[int, dict[str, int]]:
    """Render the cards' PDFs in batches (:func:`card_batches`): in this process for
    one job, else in worker processes that each make one batch and end: the
    renderer's memory grows with the cards a process has made (over 1 GB after 150),
    so no process makes more than :data:`CARDS_PER_WORKER`. With more than one job,
    cards laid out in parts are made part by part first (:func:`_render_parted`).
    Returns the layouts made (of the fitted cards) and each fitted card's pages (by
    file)."""
    done = layouts = 0
    pages: dict[str, int] = {}
    workers = max(1, jobs)

    def tick(targets: list[str]) -> None:
        nonlocal done
        for target in targets:
            done += 1
            if progress:
                progress(done, len(cards), Path(target).relative_to(tmp).as_posix())

    parted = [c for c in cards if getattr(c, "parts", 0) > 1] if workers > 1 else []
    if parted:
        _render_parted(parted, workers, tick)
    rest = [c for c in cards if all(c is not p for p in parted)]
    batches = card_batches(rest, max(1, min(CARDS_PER_WORKER, -(-len(rest) // workers))))
    if len(batches) <= 1:
        for batch in batches:
            targets, made, _, counted = _render_pdfs(batch)
            layouts += made
            pages.update(counted)
            tick(targets)
        return layouts, pages
    learned: dict = {}  # each round starts from what the rounds before learned
    for start in range(0, len(batches), workers):  # fresh processes for every round
        round_ = [_Batch(b) for b in batches[start : start + workers]]
        known = {group: dict(seen) for group, seen in learned.items()}  # fixed for the round
        for batch in round_:
            batch.learned = known
        with ProcessPoolExecutor(max_workers=len(round_)) as fresh:
            for targets, made, overflowed, counted in _map(
                fresh, _render_pdfs, round_, "a card-rendering process"
            ):
                layouts += made
                pages.update(counted)
                _learn(learned, overflowed)
                tick(targets)
    return layouts, pages


def _pack_cover(task):
    """Worker: the cover of one :class:`~cardgen.render.pages.PackGroup`'s packs laid
    out and written (:func:`~cardgen.render.pages.render_pack_group`)."""
    from cardgen.render.pages import render_pack_group

    return render_pack_group(*task)


def _write_packs(config, groups: list, jobs: int, tmp: Path) -> dict[str, int]:
    """Write the print packs. The covers first: the shortest group's (a route's packs,
    or the event's) here, and the next shortest until one is long enough to show its
    rows per page (three pages); then the others from those rows (each laid out once
    where that guess of its length holds), one group per worker process when ``jobs``
    > 1, the event's (the longest) first; then every pack file in one pass over the
    cards, here (:func:`~cardgen.render.packs.write_packs`: each card read once for
    its route's packs and the event's). Returns each pack's cover length, by its
    folder relative to ``tmp`` (for the manifest: the next build's first guess)."""
    from cardgen.render.packs import write_packs

    if not groups:
        return {}
    groups = sorted(groups, key=lambda g: -len(g.entries))
    made: dict[int, tuple] = {}
    per_page = None
    for k in reversed(range(len(groups))):  # shortest first, until a cover shows its rows per page
        made[k] = _pack_cover((config, groups[k]))
        per_page = made[k][3]
        if per_page is not None:
            break
    rest = [k for k in range(len(groups)) if k not in made]
    with _pool(jobs, len(rest)) as pool:
        tasks = [(config, groups[k], per_page) for k in rest]
        made.update(zip(rest, _map(pool, _pack_cover, tasks, "a print-pack process"), strict=True))
    covers, packs = {}, []
    with contextlib.ExitStack() as files:
        for k, group in enumerate(groups):
            length, pack, (flat, two_up), _ = made[k]
            covers[group.where.relative_to(tmp).as_posix()] = length
            sinks = [files.enter_context(path.open("wb")) if path else None for path in (flat, two_up)]
            packs.append(replace(pack, flat=sinks[0], two_up=sinks[1]))
        write_packs(packs)
    return covers


def _pack_pages(old: dict, slug: str) -> dict:
    """The pages of each card of route ``slug`` in the previous site's manifest (by
    card file; a card kept from it has the same file)."""
    try:
        rows = old["routes"][slug]["summary"]["pack"]
        return {row["card"]: row["pages"] for row in rows if _count(row.get("pages"))}
    except (KeyError, TypeError):  # no previous site, or not one this version wrote
        return {}


def _dict(value) -> dict:
    return value if isinstance(value, dict) else {}


def _count(value) -> bool:
    """Whether ``value`` (from a manifest) is a count of pages."""
    return isinstance(value, int) and not isinstance(value, bool) and 0 < value < 1_000_000


#: What every card-rendering and pack worker imports: loaded once in the build
#: process before it forks them, each worker starts with it (a worker importing it
#: itself spent 0.6 CPU-s; a 300-rider build forks some twenty).
PRELOAD = ("weasyprint", "pikepdf", "cardgen.render.pdf", "cardgen.render.packs")


def _preload() -> None:
    import importlib

    for name in PRELOAD:
        importlib.import_module(name)


def _render(config, routes, old, out, tmp, pdf, progress, report, reusable, jobs=1) -> dict:
    from cardgen.plan.starts import event_starts
    from cardgen.render.pages import built_stamp, pack_groups, render_day_sheet, render_index, site_context

    site = site_context(config, event_starts(config), built_stamp(os.environ.get("SOURCE_DATE_EPOCH")))
    manifest: dict = {"version": __version__, "routes": {}}
    fresh = []
    for route in routes:
        if route.summary is None:
            if reusable(route):
                shutil.copytree(out / route.slug, tmp / route.slug, copy_function=os.link, symlinks=True)
                manifest["routes"][route.slug] = old["routes"][route.slug]
                report.routes_reused += 1
                report.cards_reused += len(old["routes"][route.slug].get("cards", []))
            continue  # a failed route (with --keep-going) is left out
        fresh.append(route)
    cards: list = []
    for route in fresh:
        summary = route.summary
        card_names = summary.pop("cards")
        keys = {Path(c.target).name: c.key for c in route.cards}
        manifest["routes"][route.slug] = {
            "key": route.key,
            "summary": summary,
            "cards": card_names,
            "card_keys": keys,
        }
        if not pdf:
            continue
        # a card whose own content is unchanged keeps its PDF from the previous site
        was = old.get("routes", {}).get(route.slug, {}).get("card_keys", {})
        for card in route.cards:
            name = Path(card.target).name
            before = out / route.slug / name
            if was.get(name) == keys[name] and before.is_file() and not before.is_symlink():
                os.link(before, card.target)
                report.cards_reused += 1
            else:
                cards.append(card)
        route.cards = []

    t_pdf, c_pdf = time.perf_counter(), _cpu()
    if pdf and jobs > 1:
        _preload()
    report.layouts, pages = _render_cards(cards, jobs, tmp, progress)
    for route in fresh:  # each card's pages beside it in the pack order, kept in the manifest
        was = _pack_pages(old, route.slug)
        for row in route.summary.get("pack", []):
            row["pages"] = pages.get(str(tmp / route.slug / row["card"]), was.get(row["card"]))
    report.cards_rendered = len(cards)
    report.seconds["pdf"], report.cpu["pdf"] = time.perf_counter() - t_pdf, _cpu() - c_pdf

    if pdf:
        t_pack, c_pack = time.perf_counter(), _cpu()
        summaries_by_slug = [
            (r.slug, manifest["routes"][r.slug]["summary"]) for r in routes if r.slug in manifest["routes"]
        ]
        covers = {k: v for k, v in _dict(old.get("covers")).items() if isinstance(k, str) and _count(v)}
        groups = pack_groups(config, summaries_by_slug, tmp, {r.slug for r in fresh}, covers)
        manifest["covers"] = covers | _write_packs(config, groups, jobs, tmp)
        report.seconds["packs"], report.cpu["packs"] = time.perf_counter() - t_pack, _cpu() - c_pack
    summaries = [manifest["routes"][r.slug]["summary"] for r in routes if r.slug in manifest["routes"]]
    write_files(tmp, render_index(config, site, summaries, packs=(tmp / "all-cards.pdf").is_file()))
    write_files(tmp, render_day_sheet(config, summaries, tmp, pdf))
    return manifest

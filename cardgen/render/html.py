"""The Jinja2 environment (autoescape on, undefined values are errors) and the page
contexts: plain dictionaries of plans and rows, formatted by filters in templates."""

from __future__ import annotations

import re
import unicodedata
from collections.abc import Callable, Iterable
from dataclasses import dataclass
from datetime import datetime
from pathlib import Path

import jinja2

from cardgen.errors import CardgenError
from cardgen.paths import default_templates
from cardgen.plan import Plan
from cardgen.plan.model import Notice
from cardgen.plan.rider import BATTERY_RESERVE
from cardgen.render import format as fmt
from cardgen.render.notices import notice_text
from cardgen.render.sandbox import ThemeEnvironment
from cardgen.units import S_PER_H, ZERO_CELSIUS_K

#: The caution for vehicles with a motor (cards of other vehicles leave it out).
ASSIST_CAUTION = (
    "E-assist: legal limits on motor power and assisted speed differ by place; the local rules apply."
)
#: Beside every table of descent speeds (card and route page): what the speeds are.
DESCENT_CAUTION = (
    "Speeds are model estimates (steeper pitches go faster), not safe or target speeds: check brakes "
    "before the start, brake "
    "before bends, and ride slower for the conditions, visibility, surface, traffic and posted limits."
)
#: Beside the descents table of a card whose ride is longer than :data:`LONG_RIDE` [s].
REST_CAUTION = "On a long ride, rest before the big descents: tired arms and hands brake and steer less well."
LONG_RIDE = 3 * S_PER_H
#: The e-assist caution on cards (short: the range line follows it).
CARD_ASSIST_CAUTION = "E-assist rules differ by place."
DESCENTS_CAUTION = (
    "Descents: speeds shown are model estimates (steeper pitches go faster), not safe or target speeds; "
    "check brakes, "
    "and ride slower where you cannot see ahead."
)
#: Also in the footer of every card page, in these words.
TRAFFIC_CAUTION = "Roads are open to traffic: local road rules apply."
#: Cautions printed on every page, plain and short (cards: :func:`cautions_for`).
CAUTIONS = (
    "Every figure is a model estimate from average values, not a guarantee: wind, road surface, "
    "tyres and the rider's day change them.",
    DESCENTS_CAUTION,
    "Exertion: anyone with a medical condition needs clearance from a qualified professional "
    "before hard efforts; adaptive athletes follow their clinician's advice.",
    TRAFFIC_CAUTION,
    ASSIST_CAUTION,
)

#: Short symbols for warnings on cards, with their meaning (our own letters).
SYMBOLS = {
    "walk": ("D", "dismount: below balance speed on two wheels over a stretch, walking may be needed"),
    "steep": ("S", "a stretch of 10 % or more"),
    "w-prime": ("R", "W′ (the work the rider can do above CP) runs out at this effort"),
    "fast": ("F", "coasting would pass the speed set for this vehicle: brake to hold it"),
    "curve": ("C", "curve, or a turn reached fast: slow down before it"),
    "battery": ("B", "the battery may not last with a reserve"),
    "crawl": ("K", "slow for a long way: plan rests"),
    "over-cp": ("P", "the target speed takes more than this rider's CP"),
    "traction": ("T", "steep for a driven front wheel"),
}


#: Latin letters that Unicode does not decompose into a base letter and a mark, with
#: their usual ASCII spelling (Ł → L, Ø → O, ß → ss, …), so that a name keeps them.
_UNDECOMPOSED = str.maketrans(
    {
        "Ł": "L", "ł": "l", "Ø": "O", "ø": "o", "Đ": "D", "đ": "d", "Ð": "D", "ð": "d",
        "Þ": "Th", "þ": "th", "Æ": "AE", "æ": "ae", "Œ": "OE", "œ": "oe", "ß": "ss",
        "ı": "i", "Ħ": "H", "ħ": "h", "Ŧ": "T", "ŧ": "t", "Ŋ": "N", "ŋ": "n", "ĸ": "k",
    }
)  # fmt: skip


def slugify(text: str, taken: set[str] | None = None) -> str:
    """A file and URL name of ASCII letters, digits and hyphens: never empty, never
    '.' or '..', unique among ``taken`` (which it updates). Accented letters lose
    their marks and letters such as Ł, Ø and ß are spelt out (L, O, ss)."""
    ascii_text = (
        unicodedata.normalize("NFKD", text.translate(_UNDECOMPOSED)).encode("ascii", "ignore").decode("ascii")
    )
    slug = re.sub(r"[^a-z0-9]+", "-", ascii_text.lower()).strip("-")[:60].strip("-") or "route"
    if taken is not None:
        base, n = slug, 2
        while slug in taken:
            slug = f"{base}-{n}"
            n += 1
        taken.add(slug)
    return slug


def _refuse_hard_link(path: Path) -> None:
    """A file of a site's theme with more than one name (a hard link) may be any file
    of the same disk, outside the theme: it is refused, never published or included."""
    links = path.stat().st_nlink
    if links > 1:
        raise CardgenError(
            f"{path}: a hard link (the file has {links} names), which may be a file outside the theme "
            "folder; cardgen reads no theme file with more than one name. Put a copy of the file itself "
            "in the theme folder"
        )


class ThemeLoader(jinja2.FileSystemLoader):
    """Templates from the search path, never through a link that leads out of the
    folder it was found in (a theme could otherwise publish any file it can read),
    and, in the site's own theme folder ``own``, never a hard link."""

    def __init__(self, searchpath: list[str], own: Path | None = None):
        super().__init__(searchpath)
        self.own = None if own is None else Path(own).resolve()

    def get_source(
        self, environment: jinja2.Environment, template: str
    ) -> tuple[str, str, Callable[[], bool]]:
        source, filename, uptodate = super().get_source(environment, template)
        real = Path(filename).resolve()
        if not any(Path(root).resolve() in real.parents for root in self.searchpath):
            raise jinja2.TemplateNotFound(f"{template} (a link out of the theme folder, not followed)")
        if self.own is not None and self.own in real.parents:
            _refuse_hard_link(real)
        return source, filename, uptodate


def theme_file(override: Path | None, name: str) -> Path:
    """A theme's own file (e.g. style.css) if it has one inside its folder, else
    cardgen's; a link out of the theme folder, or a hard link, is refused with a
    clear error."""
    if override is not None and (override / name).exists():
        real = (override / name).resolve()
        if Path(override).resolve() not in real.parents or not real.is_file():
            raise CardgenError(
                f"{override / name}: a link out of the theme folder; cardgen does not follow it. "
                "Put the file itself in the theme folder"
            )
        _refuse_hard_link(real)
        return real
    return default_templates() / name


def environment(override: Path | None = None, units: str = "metric") -> jinja2.Environment:
    """Jinja2 with autoescape, StrictUndefined, the unit filters, and the search path
    ``override`` (a site's own templates) first, then cardgen's.

    A theme is code: it is rendered in Jinja2's sandbox, so a template can read the
    values it is given but cannot reach Python's internals or run commands, and each
    render is bounded in time and memory (:mod:`cardgen.render.sandbox`)."""
    paths = ([str(override)] if override else []) + [str(default_templates())]
    env = ThemeEnvironment(
        loader=ThemeLoader(paths, override),
        autoescape=True,
        undefined=jinja2.StrictUndefined,
        trim_blocks=True,
        lstrip_blocks=True,
        keep_trailing_newline=True,
    )
    for name, function in fmt.FILTERS.items():
        env.filters[name] = function
    env.filters["notice"] = notice_text
    env.globals.update(
        units=units,
        cautions=CAUTIONS,
        assist_caution=ASSIST_CAUTION,
        descent_caution=DESCENT_CAUTION,
        rest_caution=REST_CAUTION,
        long_ride=LONG_RIDE,
        symbols=SYMBOLS,
        clock=fmt.clock,
        start_clock=fmt.start_clock,
        cautions_for=cautions_for,
        legend_for=legend_for,
        assist_plan=assist_plan,
        battery_use=battery_use,
    )
    return env


@dataclass(frozen=True)
class RiderView:
    """One rider's plan as the pages show it."""

    name: str
    slug: str
    plan: Plan
    card: str  # file name of the PDF card
    start: datetime | None
    bib: int | None = None
    wave: str | None = None


#: From this air temperature [°C] the cards carry the hot-weather caution: common
#: practice, no published source (cardgen's fluid guide changes band at 25 °C).
HOT_C = 25.0


def heat_caution(celsius: float) -> str:
    """The hot-weather caution (Sawka et al. 2007, ACSM position stand, Med Sci Sports
    Exerc 39(2):377–390: sweat losses of about 0.4–1.8 L/h; drink to keep body-mass
    loss under about 2 %, and not more than is sweated out)."""
    return (
        f"Hot weather (planned at {celsius:.0f} °C): sweat losses can run well above the fluid figures "
        "shown, up to about 1.8 L an hour (Sawka et al. 2007). Drink to keep body-mass loss under about "
        "2 %, and not more than you sweat out; rest in shade. Follow medical and clinician advice: "
        "adaptive riders may have impaired temperature control and need their own plan for heat."
    )


def cautions_for(plan: Plan) -> tuple[str, ...]:
    """The cautions at the end of this rider's card: the hot-weather one from
    :data:`HOT_C`; never the descents one (it is beside the descents as
    :data:`DESCENT_CAUTION`, and a card without descents shows no descent speeds); the
    e-assist ones (rules, the range with the battery the plan assumes, the motor's
    assist levels) only where there is a motor."""
    # once is enough: a card prints the descent caution beside its descents, and the
    # traffic one in the footer of every page; a card without descents shows no descent
    # speeds, so the descents caution has nothing to speak of there
    skip = {ASSIST_CAUTION, TRAFFIC_CAUTION, DESCENTS_CAUTION}
    general = tuple(c for c in CAUTIONS if c not in skip)
    temperature = plan.conditions.temperature
    if temperature is not None and temperature - ZERO_CELSIUS_K >= HOT_C:
        general = (*general, heat_caution(temperature - ZERO_CELSIUS_K))
    if plan.motor is None:
        return general
    return (*general, f"{CARD_ASSIST_CAUTION} {assist_range(plan)} {assist_levels(plan)}")


def assist_levels(plan: Plan) -> str:
    """Every assist level of the rider's motor with its ratio, for the e-assist caution
    at the end of a card (each level the plan names carries its ratio where it is
    named, so the list takes no line of its own on the first pages)."""
    if plan.motor is None:
        return ""
    levels = plan.motor.levels
    ratios = ", ".join(f"{r * 100:.0f}" for r in levels)
    which = "level 1" if len(levels) == 1 else f"levels 1–{len(levels)}"
    return f"Assist {which}: {ratios} % of the rider's power."


def assist_plan(plan: Plan, units: str) -> str:
    """The card's assist words for the day: the level between the climbs, and where
    the plan has the motor switched off to keep the battery's reserve ("" without a
    motor)."""
    motor, off = plan.motor, plan.assist_off_at
    if motor is None:
        return ""
    keeps = f"keeps the {BATTERY_RESERVE * 100:.0f} % reserve"
    if plan.assist_between is None:
        return "" if off is None else f"assist off from {fmt.distance(off, units)}: {keeps}"
    level = f"assist between climbs {motor.level_name(plan.assist_between)}"
    if off is None or plan.assist_between == 0:
        return level if off is None else f"{level}; all assist off from {fmt.distance(off, units)}: {keeps}"
    return f"{level} until {fmt.distance(off, units)}, then off: {keeps}"


def battery_figures(plan: Plan) -> tuple[float, float, float] | None:
    """The battery figures a card, a coach sheet and a range line print [Wh], one
    rounding each so that they agree wherever they appear: (drawn, usable, kept).
    Usable rounds down (a limit); drawn rounds up (a need) but never past the share
    the plan may draw (usable less :data:`BATTERY_RESERVE`, rounded down) when the
    plan keeps the reserve; kept is the rest of the printed usable figure above that
    share, so drawn + kept never exceeds usable on paper. None without a motor."""
    motor = plan.motor
    if motor is None:
        return None
    usable = fmt.battery_wh(motor.usable_battery, "down")
    limit = fmt.battery_wh(motor.usable_battery * (1.0 - BATTERY_RESERVE), "down")
    drawn = fmt.battery_wh(plan.totals.battery or 0.0, "up")
    if plan.totals.battery_fits:
        drawn = min(drawn, limit)
    return drawn, usable, usable - limit


def battery_use(plan: Plan) -> str:
    """ "108 Wh of 135 Wh": what the plan draws of the usable battery ("" without a
    motor), the figures of :func:`battery_figures`."""
    figures = battery_figures(plan)
    if figures is None:
        return ""
    drawn, usable, _ = figures
    return f"{drawn:.0f} Wh of {usable:.0f} Wh"


def assist_range(plan: Plan) -> str:
    """The e-assist range line, one statement: what the plan keeps back of the usable
    battery ("Range: keeps at least 27 Wh (20 %)"; the figures of
    :func:`battery_figures`, so it adds up with page 1's "108 Wh of 135 Wh"), what
    shortens the range, and that the rider should be able to finish with the motor
    off. No longer than the line it replaced: a longer one added a page to
    large-print e-assist cards."""
    figures = battery_figures(plan)
    if figures is None:
        return ""
    kept = figures[2]
    return (
        f"Range: keeps at least {kept:.0f} Wh ({BATTERY_RESERVE * 100:.0f} %); "
        "cold, age, load cut it: be able to finish with assist off."
    )


def legend_for(plan: Plan) -> list[tuple[str, str]]:
    """(letter, meaning) of exactly the symbols this plan's card shows."""
    used = {w.code for row in plan.climbs for w in row.warnings}
    used |= {w.code for row in plan.descents for w in row.warnings}
    used |= {w.code for w in plan.warnings}
    return [symbol for code, symbol in SYMBOLS.items() if code in used]


def symbol_of(code: str) -> str:
    """The symbol letter of a warning code ("" for a code without one)."""
    return SYMBOLS[code][0] if code in SYMBOLS else ""


def symbols_for(warnings: Iterable[Notice]) -> list[str]:
    """Distinct symbol letters for a row's warnings, in the order of :data:`SYMBOLS`."""
    codes = {w.code for w in warnings}
    return [SYMBOLS[c][0] for c in SYMBOLS if c in codes]

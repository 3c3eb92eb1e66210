"""The sandbox a theme's templates run in, with bounds on the work one render may do.

A theme is code that the site's author trusts, but its mistakes must still end in one
clear line, never a traceback or a machine that stops answering: a template that
includes itself, a loop nested without end, a string of ten billion characters. Each
call of a template's ``render`` is bounded by :data:`RENDER_SECONDS` of time and
:data:`RENDER_BYTES` of memory, and every error inside it becomes one
:class:`~cardgen.errors.CardgenError` naming the template (and its line where Jinja2
knows it).
"""

from __future__ import annotations

import contextlib
import ctypes
import operator
import resource
import threading
import traceback
from collections.abc import Iterator
from typing import Any

import jinja2
import jinja2.sandbox

from cardgen.errors import CardgenError

#: Longest one render of a template may take [s]. The default theme renders the
#: route page of 300 riders in well under a second; a minute leaves room for slow
#: machines and rich themes, and still ends a loop that would never finish.
RENDER_SECONDS = 60.0
#: Memory one render of a template may add to the process [bytes] (its address
#: space, RLIMIT_AS); the default theme's largest page needs a few MB.
RENDER_BYTES = 1 << 30
#: Longest string or list a template may make with ``*`` [items].
MAX_REPEAT = 10_000_000
#: Largest integer a template may make with ``**`` [bits].
MAX_POWER_BITS = 10_000


class RenderTimeout(BaseException):
    """Raised inside a render that ran past its time (a BaseException, so that no
    ``except Exception`` in a template's filters can swallow it)."""


def _raise_in(thread_id: int, exc: type[BaseException]) -> None:
    """Raise ``exc`` in the thread ``thread_id`` at its next bytecode."""
    ctypes.pythonapi.PyThreadState_SetAsyncExc(ctypes.c_ulong(thread_id), ctypes.py_object(exc))


def _take_pending() -> None:
    """Run bytecode until the timeout set in this thread arrives, and swallow it.

    The timer fired but the render ended before the exception was raised. Clearing it
    with ``PyThreadState_SetAsyncExc(id, NULL)`` instead still signals a pending
    asynchronous exception (CPython's ``Python/pystate.c``), and the eval loop lowers
    that signal only when it takes a real one: the flag stays up with nothing behind
    it. Seen here: under coverage's trace function the process then made no progress
    after the render (tests/test_sandbox.py). Letting the exception arrive lowers the
    flag the interpreter's own way.
    """
    try:
        for _ in range(10_000_000):  # the exception arrives at the first backward jump
            pass
    except RenderTimeout:
        return


class _Deadline:
    """A timer that raises :class:`RenderTimeout` in the thread that entered it once
    ``seconds`` have passed, unless it has been left before."""

    def __init__(self, seconds: float):
        self._thread = threading.get_ident()
        self._lock = threading.Lock()
        self._armed = False
        self._fired = False
        self._timer = threading.Timer(seconds, self._fire)
        self._timer.daemon = True

    def _fire(self) -> None:
        with self._lock:
            if self._armed:
                self._fired = True
                _raise_in(self._thread, RenderTimeout)

    def __enter__(self) -> _Deadline:
        self._armed = True
        self._timer.start()
        return self

    def __exit__(self, kind: type[BaseException] | None, *exc: object) -> None:
        self._timer.cancel()
        with self._lock:
            self._armed = False
            fired = self._fired
        if fired and not (kind is not None and issubclass(kind, RenderTimeout)):
            _take_pending()
        if fired:
            raise RenderTimeout


def _address_space() -> int:
    """This process's address space now [bytes] (Linux: /proc/self/statm)."""
    with open("/proc/self/statm", encoding="ascii") as statm:
        return int(statm.read().split()[0]) * resource.getpagesize()


@contextlib.contextmanager
def _memory_budget(extra: int) -> Iterator[None]:
    """Let the process's address space grow by at most ``extra`` bytes inside the
    block (a larger allocation raises MemoryError); the old limit comes back after."""
    soft, hard = resource.getrlimit(resource.RLIMIT_AS)
    try:
        limit = _address_space() + extra
    except OSError:  # no /proc: no memory bound, the time bound still holds
        yield
        return
    if hard != resource.RLIM_INFINITY:
        limit = min(limit, hard)
    if soft != resource.RLIM_INFINITY and soft <= limit:
        yield  # already bounded at least as tightly
        return
    resource.setrlimit(resource.RLIMIT_AS, (limit, hard))
    try:
        yield
    finally:
        resource.setrlimit(resource.RLIMIT_AS, (soft, hard))


def _where(exc: BaseException, name: str) -> str:
    """The template file and line an error was raised at (Jinja2 rewrites the
    traceback to template lines), else the template ``name``."""
    frames = [f for f in traceback.extract_tb(exc.__traceback__) if not f.filename.endswith(".py")]
    if frames:
        return f"{frames[-1].filename}, line {frames[-1].lineno}"
    return name


def _sentence(text: str) -> str:
    """An error's text on one line, without its closing full stop."""
    return " ".join(text.split()).rstrip(".")


@contextlib.contextmanager
def theme_bounds(name: str) -> Iterator[None]:
    """Run a template's work (its compiling, which folds constant expressions, or
    its rendering) within :data:`RENDER_SECONDS` and :data:`RENDER_BYTES`; any error
    but a syntax error (which names its line, see ``pages.theme_errors``) becomes one
    :class:`CardgenError` naming the template ``name``."""
    try:
        with _Deadline(RENDER_SECONDS), _memory_budget(RENDER_BYTES):
            yield
    except (CardgenError, jinja2.TemplateSyntaxError):
        raise
    except RenderTimeout:
        raise CardgenError(
            f"{name}: rendering took over {RENDER_SECONDS:.0f} s, the most a template may take; "
            "look for a loop without end or loops nested too deep"
        ) from None
    except MemoryError:
        raise CardgenError(
            f"{name}: rendering needed more than {RENDER_BYTES >> 20:,} MiB of memory, the most a "
            "template may use; look for a string or list that grows without end"
        ) from None
    except RecursionError as exc:
        raise CardgenError(
            f"{_where(exc, name)}: the template includes or extends itself, or a macro calls itself "
            "without end; fix the template"
        ) from None
    except jinja2.TemplateError as exc:
        raise CardgenError(
            f"{_where(exc, name)}: {_sentence(exc.message or type(exc).__name__)}; fix the template"
        ) from None
    except Exception as exc:  # a theme is code: any of its errors is one line
        raise CardgenError(
            f"{_where(exc, name)}: {type(exc).__name__}: {_sentence(str(exc))}; fix the template"
        ) from None


class ThemeTemplate(jinja2.Template):
    """A template whose every render is bounded in time and memory, and whose every
    error is one :class:`CardgenError`."""

    def render(self, *args: Any, **kwargs: Any) -> str:
        with theme_bounds(str(self.filename or self.name)):
            return super().render(*args, **kwargs)


def _repeat_size(left: Any, right: Any) -> int:
    """Items ``left * right`` would hold when it repeats a string or list, else 0."""
    for seq, count in ((left, right), (right, left)):
        if isinstance(seq, str | bytes | list | tuple) and isinstance(count, int):
            return len(seq) * max(count, 0)
    return 0


class ThemeEnvironment(jinja2.sandbox.SandboxedEnvironment):
    """Jinja2's sandbox, with :class:`ThemeTemplate` and bounds on ``*`` and ``**``
    (a string repeated ten billion times, an integer of a billion digits), and a
    template nested too deeply to parse refused as a syntax error."""

    template_class = ThemeTemplate
    intercepted_binops = frozenset({"*", "**"})

    def call_binop(self, context: jinja2.runtime.Context, op: str, left: Any, right: Any) -> Any:
        if op == "*" and _repeat_size(left, right) > MAX_REPEAT:
            raise jinja2.exceptions.SecurityError(
                f"a string or list of {_repeat_size(left, right):,} items; a template may make at most "
                f"{MAX_REPEAT:,}"
            )
        if op == "**" and isinstance(left, int) and isinstance(right, int) and right > 0:
            if max(abs(left).bit_length() - 1, 0) * right > MAX_POWER_BITS:
                raise jinja2.exceptions.SecurityError(
                    f"{left} ** {right} is an integer of over {MAX_POWER_BITS:,} bits; a template may not "
                    "make one that large"
                )
        return {"*": operator.mul, "**": operator.pow}[op](left, right)

    def _parse(self, source: str, name: str | None, filename: str | None) -> Any:
        try:
            return super()._parse(source, name, filename)
        except RecursionError:
            raise jinja2.TemplateSyntaxError(
                "the template nests too deeply to read", 1, name, filename
            ) from None

    def _generate(self, source: Any, name: str | None, filename: str | None, defer_init: bool = False) -> str:
        # constant expressions are worked out here, at compile time: bounded as a render
        with theme_bounds(str(filename or name)):
            try:
                return str(super()._generate(source, name, filename, defer_init=defer_init))
            except RecursionError:
                raise jinja2.TemplateSyntaxError(
                    "the template nests too deeply to read", 1, name, filename
                ) from None

    def _compile(self, source: str, filename: str) -> Any:
        try:
            return super()._compile(source, filename)
        except (RecursionError, MemoryError, SyntaxError):
            raise jinja2.TemplateSyntaxError(
                "the template nests too deeply to read", 1, None, filename
            ) from None

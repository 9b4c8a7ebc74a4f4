"""When each emergency luminaire's next tests are due.

Two tests recur for every converted luminaire: the monthly function test
(simulated mains failure, every lamp checked lit) and the annual
full-duration test. The dates are computed from the commissioning date and
the tests logged since, never typed in.

The rule
--------
1. Intervals are whole days, as the area's profile states them
   (``Profile.monthly_test_days``, ``Profile.annual_test_days``): a test is
   due ``interval`` days after the day it is counted from. NFPA 101 §7.9.3
   speaks of tests at 30-day intervals; a calendar-month rule would allow a
   31-day gap after 31 January, so day counts are kept. The same rule makes
   month ends and 29 February need no special case (31 January + 30 days is
   2 March, or 1 March in a leap year; 29 February 2028 + 365 days is
   28 February 2029).
2. The clock of a kind starts at commissioning and restarts on the day of
   the latest test that counts for that kind. A *passing* duration test also
   counts as a function test (it changes over to battery and shows every lamp
   lit, and more; common practice). A function test never counts as a
   duration test, and a failed duration test does not stand in for a
   function test.
3. A test done late restarts its clock from the day it was done, not from
   the missed due date, so the gap after it is again one interval. It moves
   nothing else: a late function test leaves the annual date where it was.
4. A failed test does not restart the clock: the luminaire is faulty, so the
   test of that kind is due again at once (on the day of the failure) until a
   passing one is logged after the repair.
5. Tests dated before commissioning belong to the luminaire before its
   conversion and are ignored.

Due states, against ``today`` and a "due soon" window of ``due_soon_days``
(7 by default): overdue (the due day has passed), due (today), due soon
(within the window), scheduled (later).

References
----------
.. [1] NFPA 101 Life Safety Code §7.9.3: functional test at 30-day intervals
   for at least 30 s, annual test for 1.5 h, written records (checked against
   a page quoting it).
.. [2] EN 50172:2004 §7: monthly simulated failure of the normal supply,
   annual full rated-duration test, results in the log book (checked against
   pages quoting it; EN 50172:2024 now exists).
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass
from datetime import date, timedelta
from enum import StrEnum

from server.engineering.errors import InvalidInput

DEFAULT_DUE_SOON_DAYS = 7  # our choice: a week's notice to plan a visit; configurable


class TestKind(StrEnum):
    """The two recurring tests."""

    __test__ = False  # not a pytest test class

    FUNCTION = "function"  # monthly
    DURATION = "duration"  # annual, full rated duration


class DueState(StrEnum):
    OVERDUE = "overdue"
    DUE = "due"
    DUE_SOON = "due-soon"
    SCHEDULED = "scheduled"


# Most urgent first, for sorting lists.
DUE_STATE_RANK: dict[DueState, int] = {
    DueState.OVERDUE: 0,
    DueState.DUE: 1,
    DueState.DUE_SOON: 2,
    DueState.SCHEDULED: 3,
}


@dataclass(frozen=True, slots=True)
class LoggedTest:
    """A test that stands in the log (corrections already applied).

    Attributes
    ----------
    tested_on : date
        Day the test was done.
    kind : TestKind
        Function or duration test.
    passed : bool
        Whether the luminaire passed.
    """

    tested_on: date
    kind: TestKind
    passed: bool


class Basis(StrEnum):
    """What a due date is counted from."""

    COMMISSIONED = "commissioned"
    LAST_PASS = "last-pass"
    FAILED = "failed"


@dataclass(frozen=True, slots=True)
class NextTest:
    """The next test of one kind for one luminaire.

    Attributes
    ----------
    kind : TestKind
        Function or duration test.
    due_on : date
        Day the test falls due.
    state : DueState
        Overdue, due, due soon or scheduled on ``today``.
    days_left : int
        Days from today to ``due_on``; negative when overdue. [day]
    basis : Basis
        Counted from commissioning, from the last passing test, or due at
        once after a failure.
    counted_from : date
        The day the interval runs from (the failure day for ``FAILED``).
    interval_days : int
        Interval applied. [day]
    """

    kind: TestKind
    due_on: date
    state: DueState
    days_left: int
    basis: Basis
    counted_from: date
    interval_days: int


def due_state(due_on: date, today: date, *, due_soon_days: int = DEFAULT_DUE_SOON_DAYS) -> DueState:
    """Classify a due date against today.

    Parameters
    ----------
    due_on : date
        Day the test falls due.
    today : date
        The day the list is made.
    due_soon_days : int
        Width of the "due soon" window after today. [day]

    Returns
    -------
    DueState
        OVERDUE before today, DUE on today, DUE_SOON within the window,
        SCHEDULED beyond it.
    """
    if due_soon_days < 0:
        raise InvalidInput("due_soon_days", "the due-soon window cannot be negative")
    if due_on < today:
        return DueState.OVERDUE
    if due_on == today:
        return DueState.DUE
    if due_on <= today + timedelta(days=due_soon_days):
        return DueState.DUE_SOON
    return DueState.SCHEDULED


def _counts_for(test: LoggedTest, kind: TestKind) -> bool:
    if kind is TestKind.DURATION:
        return test.kind is TestKind.DURATION
    return test.kind is TestKind.FUNCTION or test.passed


def next_test(
    kind: TestKind,
    *,
    commissioned_on: date,
    tests: Iterable[LoggedTest],
    interval_days: int,
    today: date,
    due_soon_days: int = DEFAULT_DUE_SOON_DAYS,
) -> NextTest:
    """The next test of ``kind``, by the rule in this module's docstring.

    Parameters
    ----------
    kind : TestKind
        Function (monthly) or duration (annual) test.
    commissioned_on : date
        Day the converted luminaire was commissioned.
    tests : iterable of LoggedTest
        The luminaire's standing tests, in any order.
    interval_days : int
        The profile's interval for this kind. [day]
    today : date
        The day the schedule is made.
    due_soon_days : int
        Width of the "due soon" window. [day]

    Returns
    -------
    NextTest
        The due date, its state and what it is counted from.

    Raises
    ------
    InvalidInput
        When the interval is not at least one day.

    References
    ----------
    NFPA 101 §7.9.3; EN 50172:2004 §7 (see the module docstring).
    """
    if interval_days < 1:
        raise InvalidInput("interval_days", "a test interval is at least one day")
    relevant = [
        test for test in tests if test.tested_on >= commissioned_on and _counts_for(test, kind)
    ]
    # On one day a pass logged beside a fail (a retest after a repair) wins.
    latest = max(relevant, key=lambda test: (test.tested_on, test.passed), default=None)
    if latest is None:
        basis, counted_from = Basis.COMMISSIONED, commissioned_on
        due_on = commissioned_on + timedelta(days=interval_days)
    elif latest.passed:
        basis, counted_from = Basis.LAST_PASS, latest.tested_on
        due_on = latest.tested_on + timedelta(days=interval_days)
    else:
        basis, counted_from = Basis.FAILED, latest.tested_on
        due_on = latest.tested_on
    return NextTest(
        kind=kind,
        due_on=due_on,
        state=due_state(due_on, today, due_soon_days=due_soon_days),
        days_left=(due_on - today).days,
        basis=basis,
        counted_from=counted_from,
        interval_days=interval_days,
    )


def fixture_schedule(
    *,
    commissioned_on: date,
    tests: Iterable[LoggedTest],
    monthly_test_days: int,
    annual_test_days: int,
    today: date,
    due_soon_days: int = DEFAULT_DUE_SOON_DAYS,
) -> tuple[NextTest, NextTest]:
    """The next function test and the next duration test of one luminaire.

    Parameters
    ----------
    commissioned_on : date
        Day the converted luminaire was commissioned.
    tests : iterable of LoggedTest
        The luminaire's standing tests.
    monthly_test_days, annual_test_days : int
        The profile's intervals. [day]
    today : date
        The day the schedule is made.
    due_soon_days : int
        Width of the "due soon" window. [day]

    Returns
    -------
    tuple of NextTest
        (function test, duration test).
    """
    logged = list(tests)

    def next_of(kind: TestKind, interval_days: int) -> NextTest:
        return next_test(
            kind,
            commissioned_on=commissioned_on,
            tests=logged,
            interval_days=interval_days,
            today=today,
            due_soon_days=due_soon_days,
        )

    return next_of(TestKind.FUNCTION, monthly_test_days), next_of(
        TestKind.DURATION, annual_test_days
    )


def longest_gap_days(
    *,
    commissioned_on: date,
    tests: Iterable[LoggedTest],
    kind: TestKind,
    until: date,
) -> int:
    """Longest stretch without a passing test of ``kind``, up to ``until``.

    Parameters
    ----------
    commissioned_on : date
        Day the luminaire was commissioned: the first stretch starts there.
    tests : iterable of LoggedTest
        The luminaire's standing tests.
    kind : TestKind
        Which clock to measure (a passing duration test counts as a function
        test, as in :func:`next_test`).
    until : date
        End of the period looked at (the last stretch runs to it).

    Returns
    -------
    int
        The longest gap between commissioning, the passing tests and
        ``until``; an inspector compares it with the interval. [day]
    """
    days = sorted(
        {
            test.tested_on
            for test in tests
            if test.passed
            and _counts_for(test, kind)
            and commissioned_on <= test.tested_on <= until
        }
    )
    marks = [commissioned_on, *days, max(until, commissioned_on)]
    return max((later - earlier).days for earlier, later in zip(marks, marks[1:], strict=False))

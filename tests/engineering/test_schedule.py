"""Due dates of the monthly function test and the annual duration test.

The date arithmetic is checked against hand counts of the calendar written
beside each case (Gregorian calendar: February has 29 days in 2028, 28 in
2027 and 2029). The intervals are the profile's (NFPA 101 §7.9.3: 30-day
intervals and an annual test; checked against a page quoting it).
"""

from __future__ import annotations

import calendar
from datetime import date, timedelta

import pytest
from hypothesis import given
from hypothesis import strategies as st

from server.engineering.errors import InvalidInput
from server.engineering.profiles import BUILTIN_PROFILES
from server.engineering.schedule import (
    Basis,
    DueState,
    LoggedTest,
    TestKind,
    due_state,
    fixture_schedule,
    longest_gap_days,
    next_test,
)

F, D = TestKind.FUNCTION, TestKind.DURATION
MONTHLY_DAYS = BUILTIN_PROFILES["us-egress"].monthly_test_days
ANNUAL_DAYS = BUILTIN_PROFILES["us-egress"].annual_test_days


def schedule(commissioned_on: date, tests: list[LoggedTest], today: date):
    return fixture_schedule(
        commissioned_on=commissioned_on,
        tests=tests,
        monthly_test_days=MONTHLY_DAYS,
        annual_test_days=ANNUAL_DAYS,
        today=today,
    )


def test_profile_intervals_are_nfpa_thirty_days_and_a_year() -> None:
    # NFPA 101 §7.9.3 (checked against a page quoting it): 30-day intervals, annual test.
    assert MONTHLY_DAYS == 30
    assert ANNUAL_DAYS == 365


def test_first_tests_count_from_commissioning() -> None:
    # 2027-03-10 + 30 days: 21 days to the end of March, 9 more: 2027-04-09.
    # 2027-03-10 + 365 days: 2028 is a leap year and its 29 February lies in
    # between, so a whole year is 366 days and 365 lands on 2028-03-09.
    monthly, annual = schedule(date(2027, 3, 10), [], today=date(2027, 3, 10))
    assert (monthly.due_on, monthly.basis) == (date(2027, 4, 9), Basis.COMMISSIONED)
    assert (annual.due_on, annual.basis) == (date(2028, 3, 9), Basis.COMMISSIONED)


@pytest.mark.parametrize(
    ("commissioned_on", "expected"),
    [
        # 31 January + 30 days: 28 days of February 2027 take us to 28 Feb (+28),
        # then 1 March (+29) and 2 March (+30).
        (date(2027, 1, 31), date(2027, 3, 2)),
        # In 2028 February has 29 days: 29 Feb is +29, 1 March is +30.
        (date(2028, 1, 31), date(2028, 3, 1)),
        # 30 January 2028: 1 day to 31 Jan, 29 in February (+30) lands on 29 Feb.
        (date(2028, 1, 30), date(2028, 2, 29)),
        # 31 December + 30 days crosses the year: 30 January.
        (date(2026, 12, 31), date(2027, 1, 30)),
    ],
)
def test_month_ends_and_leap_february(commissioned_on: date, expected: date) -> None:
    monthly, _ = schedule(commissioned_on, [], today=commissioned_on)
    assert monthly.due_on == expected
    # The independent count: days left in the month plus days into the next months.
    days_in_month = calendar.monthrange(commissioned_on.year, commissioned_on.month)[1]
    days_left_in_month = days_in_month - commissioned_on.day
    if expected.month == commissioned_on.month:
        assert expected.day - commissioned_on.day == 30
    else:
        between = sum(
            calendar.monthrange(day.year, day.month)[1]
            for day in _whole_months_between(commissioned_on, expected)
        )
        assert days_left_in_month + between + expected.day == 30


def _whole_months_between(start: date, end: date) -> list[date]:
    months = []
    year, month = start.year, start.month
    while True:
        month += 1
        if month == 13:
            year, month = year + 1, 1
        if (year, month) >= (end.year, end.month):
            return months
        months.append(date(year, month, 1))


@pytest.mark.parametrize(
    ("last_pass", "expected"),
    [
        # 29 February 2028 + 365 days: 2029 has no 29 February; 366 days would be
        # 1 March 2029, so 365 is 28 February 2029.
        (date(2028, 2, 29), date(2029, 2, 28)),
        # 1 March 2027 + 365: the span holds 29 February 2028, so it lands on it.
        (date(2027, 3, 1), date(2028, 2, 29)),
        # 1 March 2028 + 365: no leap day in the span (next is 2032): 1 March 2029.
        (date(2028, 3, 1), date(2029, 3, 1)),
    ],
)
def test_annual_test_across_leap_days(last_pass: date, expected: date) -> None:
    tests = [LoggedTest(last_pass, D, passed=True)]
    _, annual = schedule(date(2027, 1, 1), tests, today=last_pass)
    assert annual.due_on == expected
    assert annual.basis is Basis.LAST_PASS and annual.counted_from == last_pass


def test_late_function_test_restarts_its_own_clock_and_nothing_else() -> None:
    commissioned = date(2027, 1, 1)
    # Due on 2027-01-31 (1 Jan + 30); done late on 10 February.
    late = [LoggedTest(date(2027, 2, 10), F, passed=True)]
    monthly, annual = schedule(commissioned, late, today=date(2027, 2, 10))
    # 10 February + 30: 18 days to 28 Feb, 12 into March: 12 March.
    assert monthly.due_on == date(2027, 3, 12)
    # The annual date stays 365 days after commissioning: 2028-01-01 (2027 has no leap day).
    assert annual.due_on == date(2028, 1, 1)
    assert annual.basis is Basis.COMMISSIONED
    # Same annual date as with no test at all: the late function test moved nothing else.
    assert annual == schedule(commissioned, [], today=date(2027, 2, 10))[1]


def test_early_test_also_counts_from_the_day_done() -> None:
    early = [LoggedTest(date(2027, 1, 20), F, passed=True)]
    monthly, _ = schedule(date(2027, 1, 1), early, today=date(2027, 1, 20))
    assert monthly.due_on == date(2027, 2, 19)  # 20 Jan + 11 = 31 Jan, + 19 = 19 Feb


def test_passing_duration_test_counts_as_function_test() -> None:
    tests = [LoggedTest(date(2027, 6, 1), D, passed=True)]
    monthly, annual = schedule(date(2027, 1, 1), tests, today=date(2027, 6, 1))
    assert monthly.due_on == date(2027, 7, 1)  # June has 30 days
    # 2027-06-01 + 365: the span holds 29 Feb 2028, so one day before 1 June 2028.
    assert annual.due_on == date(2028, 5, 31)


def test_function_test_never_counts_as_duration_test() -> None:
    tests = [LoggedTest(date(2027, 12, 20), F, passed=True)]
    _, annual = schedule(date(2027, 1, 1), tests, today=date(2027, 12, 20))
    assert annual.due_on == date(2028, 1, 1)


def test_failed_test_is_due_again_at_once_until_a_pass() -> None:
    commissioned = date(2027, 1, 1)
    failed = [
        LoggedTest(date(2027, 1, 30), F, passed=True),
        LoggedTest(date(2027, 2, 27), F, passed=False),
    ]
    monthly, _ = schedule(commissioned, failed, today=date(2027, 2, 28))
    assert monthly.basis is Basis.FAILED
    assert monthly.due_on == date(2027, 2, 27)
    assert monthly.state is DueState.OVERDUE and monthly.days_left == -1
    # Repaired and passed on the same day as the failure: the pass wins the tie.
    repaired = [*failed, LoggedTest(date(2027, 2, 27), F, passed=True)]
    monthly, _ = schedule(commissioned, repaired, today=date(2027, 2, 28))
    assert monthly.basis is Basis.LAST_PASS
    assert monthly.due_on == date(2027, 3, 29)  # 27 Feb + 1 = 28 Feb, + 29 = 29 March


def test_failed_duration_test_leaves_the_monthly_clock_alone() -> None:
    commissioned = date(2027, 1, 1)
    tests = [
        LoggedTest(date(2027, 12, 1), F, passed=True),
        LoggedTest(date(2027, 12, 15), D, passed=False),
    ]
    monthly, annual = schedule(commissioned, tests, today=date(2027, 12, 16))
    assert monthly.due_on == date(2027, 12, 31)  # from the function test of 1 December
    assert annual.basis is Basis.FAILED and annual.due_on == date(2027, 12, 15)
    assert annual.state is DueState.OVERDUE


def test_tests_before_commissioning_are_ignored() -> None:
    before = [LoggedTest(date(2026, 12, 20), D, passed=True)]
    monthly, annual = schedule(date(2027, 1, 1), before, today=date(2027, 1, 2))
    assert monthly.basis is Basis.COMMISSIONED and annual.basis is Basis.COMMISSIONED


@pytest.mark.parametrize(
    ("days_from_today", "window", "expected"),
    [
        (-1, 7, DueState.OVERDUE),
        (0, 7, DueState.DUE),
        (1, 7, DueState.DUE_SOON),
        (7, 7, DueState.DUE_SOON),  # the window includes its last day
        (8, 7, DueState.SCHEDULED),
        (1, 0, DueState.SCHEDULED),  # no window: tomorrow is simply scheduled
        (14, 30, DueState.DUE_SOON),
    ],
)
def test_due_states(days_from_today: int, window: int, expected: DueState) -> None:
    today = date(2027, 5, 5)
    assert due_state(today + timedelta(days=days_from_today), today, due_soon_days=window) is (
        expected
    )


def test_bad_intervals_and_windows_are_refused() -> None:
    with pytest.raises(InvalidInput, match="at least one day"):
        next_test(F, commissioned_on=date(2027, 1, 1), tests=[], interval_days=0, today=date.max)
    with pytest.raises(InvalidInput, match="cannot be negative"):
        due_state(date(2027, 1, 1), date(2027, 1, 1), due_soon_days=-1)


def test_longest_gap() -> None:
    tests = [
        LoggedTest(date(2027, 1, 31), F, passed=True),  # 30 days after commissioning
        LoggedTest(date(2027, 3, 15), F, passed=True),  # 28 + 15 = 43 days later
        LoggedTest(date(2027, 3, 20), F, passed=False),  # a failure does not close a gap
        LoggedTest(date(2027, 4, 10), D, passed=True),  # 16 + 10 = 26 days
    ]
    gap = longest_gap_days(
        commissioned_on=date(2027, 1, 1), tests=tests, kind=F, until=date(2027, 4, 30)
    )
    assert gap == 43
    annual_gap = longest_gap_days(
        commissioned_on=date(2027, 1, 1), tests=tests, kind=D, until=date(2027, 4, 30)
    )
    assert annual_gap == 99  # 1 Jan to 10 April: 30 + 28 + 31 + 10 = 99


dates = st.dates(min_value=date(2020, 1, 1), max_value=date(2040, 12, 31))


@given(
    commissioned=dates,
    offsets=st.lists(
        st.tuples(st.integers(0, 2000), st.sampled_from([F, D]), st.booleans()), max_size=12
    ),
    extra_offset=st.integers(0, 2000),
)
def test_a_function_test_never_moves_the_annual_date(
    commissioned: date, offsets: list[tuple[int, TestKind, bool]], extra_offset: int
) -> None:
    tests = [
        LoggedTest(commissioned + timedelta(days=offset), kind, passed)
        for offset, kind, passed in offsets
    ]
    today = commissioned + timedelta(days=2500)
    _, annual = schedule(commissioned, tests, today)
    extra = LoggedTest(commissioned + timedelta(days=extra_offset), F, passed=True)
    monthly_after, annual_after = schedule(commissioned, [*tests, extra], today)
    assert annual_after == annual
    # When the new test is the latest that counts for the monthly clock, it restarts it.
    counted = [t.tested_on for t in tests if t.kind is F or t.passed]
    if all(day < extra.tested_on for day in counted):
        assert monthly_after.due_on == extra.tested_on + timedelta(days=MONTHLY_DAYS)


@given(
    commissioned=dates,
    offsets=st.lists(st.integers(0, 3000), min_size=1, max_size=10),
)
def test_after_passing_tests_the_gap_is_exactly_one_interval(
    commissioned: date, offsets: list[int]
) -> None:
    tests = [LoggedTest(commissioned + timedelta(days=offset), F, True) for offset in offsets]
    monthly, _ = schedule(commissioned, tests, today=commissioned)
    latest = max(test.tested_on for test in tests)
    assert monthly.due_on - latest == timedelta(days=MONTHLY_DAYS)
    assert monthly.counted_from == latest

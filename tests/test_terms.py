"""Terms files: the TOML layout read into a Loan, line-level errors, the key-line scanner."""

from __future__ import annotations

import dataclasses
import json
import textwrap
from datetime import date, time
from decimal import Decimal
from pathlib import Path

import numpy_financial as npf
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import amort.terms
from amort import InvalidTerms, Loan, NoSolution
from amort.errors import AmortError
from amort.terms import FORMAT_VERSION, LoanTerms, key_line, parse_terms, read_terms

ROOT = Path(__file__).resolve().parents[1]
EXAMPLES = ROOT / "examples"


def doc_example() -> str:
    """The full example of the module documentation, as a file would hold it."""
    doc = amort.terms.__doc__
    assert doc is not None
    body = doc[doc.index("    format = 1") : doc.index("Keys and the ")]
    return textwrap.dedent(body)


def terms(body: str) -> str:
    """A terms file: the format line, then ``body`` (dedented)."""
    return "format = 1\n" + textwrap.dedent(body)


def refusal(text: str, error: type[Exception] = InvalidTerms) -> str:
    with pytest.raises(error) as caught:
        parse_terms(text, source="terms.toml")
    return str(caught.value)


PLAIN = """
[loan]
principal = 18500
rate = 7.9
years = 5
"""


# -- the full example, round trip -------------------------------------------------------------


def test_the_documented_example_is_the_same_loan_as_its_keywords() -> None:
    read = parse_terms(doc_example(), source="terms.toml")
    built = Loan(
        principal=36_000,
        annual_rate="6.9%",
        periods=72,
        frequency="monthly",
        balloon=0,
        timing="arrears",
        rounding="half-up",
        interest_rounding="half-up",
        start=date(2027, 2, 15),
        first_payment=date(2027, 3, 15),
        day_count="30/360",
        business_days="following",
        holidays="US",
        end_of_month=False,
        semimonthly_days=(1, 15),
        odd_days="accrue",
        interest_dates="unadjusted",
        structure="level",
        interest_only_periods=3,
        payment_growth="3%",
        growth_every=12,
    )
    assert isinstance(read, LoanTerms)
    assert read.loan == built
    assert read.loan.payment == built.payment
    pd.testing.assert_frame_equal(read.loan.schedule(), built.schedule())
    assert read.loan.reconciliation().passed
    assert read.metadata == {
        "borrower": "Marrowby Field Services",
        "reference": "TCL-2027-0042",
        "note": "Graduated repayments while the second depot opens.",
    }
    assert read.source == Path("terms.toml")


def test_a_plain_file_pays_what_numpy_financial_pmt_gives() -> None:
    """numpy-financial pmt(7.9 %/12, 60, 18,500) = 374.2319..., 374.23 to the cent."""
    loan = parse_terms(terms(PLAIN)).loan
    assert loan.payment == Decimal("374.23")
    assert abs(-npf.pmt(0.079 / 12, 60, 18_500) - 374.23) < 0.005
    assert loan == Loan(principal=18_500, annual_rate="7.9%", periods=60)
    assert loan.reconciliation().passed


def test_terms_are_frozen() -> None:
    read = parse_terms(terms(PLAIN))
    with pytest.raises(dataclasses.FrozenInstanceError):
        read.loan = Loan(principal=1, annual_rate=0, periods=1)  # type: ignore[misc]


# -- values in the command line's units ---------------------------------------------------------


@pytest.mark.parametrize(
    ("written", "percent"),
    [("6.9", "6.9%"), ('"6.9%"', "6.9%"), ('"6.9"', "6.9%"), ("7", "7%"), ("150", "150%")],
)
def test_rate_is_percent_a_year_read_as_the_loan_reads_it(written: str, percent: str) -> None:
    loan = parse_terms(terms(f"[loan]\nprincipal = 1000\nrate = {written}\nperiods = 12\n")).loan
    assert loan == Loan(principal=1000, annual_rate=percent, periods=12)


def test_toml_floats_are_exact_decimals() -> None:
    loan = parse_terms(terms("[loan]\nprincipal = 18500.10\nrate = 0.1\nperiods = 3\n")).loan
    assert loan.principal == Decimal("18500.10")
    assert loan.annual_rate == Decimal("0.001")  # 0.1 % a year, exactly


def test_amount_strings_and_underscores() -> None:
    a = parse_terms(terms('[loan]\nprincipal = "18,500.00"\nrate = 5\nperiods = 12\n')).loan
    b = parse_terms(terms("[loan]\nprincipal = 18_500\nrate = 5\nperiods = 12\n")).loan
    assert a.principal == b.principal == Decimal(18_500)


@pytest.mark.parametrize(
    ("years", "frequency", "periods"),
    [("5", "monthly", 60), ("2.5", "monthly", 30), ("1.5", "quarterly", 6), ("3", "weekly", 156)],
)
def test_years_times_payments_a_year(years: str, frequency: str, periods: int) -> None:
    text = terms(
        f'[loan]\nprincipal = 5000\nrate = 6\nyears = {years}\nfrequency = "{frequency}"\n'
    )
    assert parse_terms(text).loan.periods == periods


def test_a_payment_without_a_term_lets_the_term_follow() -> None:
    loan = parse_terms(terms("[loan]\nprincipal = 18500\nrate = 7.9\npayment = 450\n")).loan
    assert loan.periods is None
    assert loan.fixed_payment == Decimal(450)
    assert loan.number_of_payments == 49  # as README's `amort term` example


def test_toml_dates_and_iso_strings_give_the_same_loan() -> None:
    head = "[loan]\nprincipal = 12000\nrate = 8.25\nperiods = 6\n[dates]\n"
    native = parse_terms(terms(head + "start = 2027-01-15\nfirst_payment = 2027-03-01\n")).loan
    text = parse_terms(terms(head + 'start = "2027-01-15"\nfirst_payment = "2027-03-01"\n')).loan
    assert native == text
    assert native.start == date(2027, 1, 15)
    assert native.first_payment == date(2027, 3, 1)


def test_holidays_as_a_pair_and_semimonthly_days_as_an_array() -> None:
    body = """
    [loan]
    principal = 6000
    rate = 6
    periods = 12
    frequency = "semimonthly"
    [dates]
    start = 2027-01-02
    first_payment = 2027-01-15
    semimonthly_days = [15, "end"]
    business_days = "following"
    holidays = ["US", "NY"]
    """
    loan = parse_terms(terms(body)).loan
    assert loan.semimonthly_days == (15, 31)
    assert loan.holidays == ("US", "NY")


def test_structure_and_compounding_tables() -> None:
    body = """
    [loan]
    principal = 12000
    rate = 6
    periods = 6
    [structure]
    kind = "equal-principal"
    interest_only_periods = 2
    [rates]
    compounding = 2
    """
    loan = parse_terms(terms(body)).loan
    assert loan == Loan(
        principal=12_000,
        annual_rate="6%",
        periods=6,
        structure="equal-principal",
        interest_only_periods=2,
        compounding=2,
    )


# -- metadata -----------------------------------------------------------------------------------


def test_metadata_is_kept_exactly_and_only_what_is_given() -> None:
    body = '[loan]\nborrower = "=SUM(A1) & Söhne"\nnote = """line one\n\tline two"""\n' + PLAIN[8:]
    read = parse_terms(terms(body))
    # Kept as written: a leading "=" is the spreadsheet writer's to neutralise.
    assert read.metadata == {"borrower": "=SUM(A1) & Söhne", "note": "line one\n\tline two"}


@pytest.mark.parametrize(
    ("entry", "message"),
    [
        ('borrower = "a\\u0007b"', "line 3: 'borrower' in [loan] may not hold the control"),
        ('reference = "TCL\\n42"', "line 3: 'reference' in [loan] may not hold the control"),
        ('note = "a\\u001bb"', "line 3: 'note' in [loan] may not hold the control"),
        (f'borrower = "{"x" * 201}"', "line 3: 'borrower' in [loan] must be at most 200"),
        ("reference = 1042", "line 3: 'reference' in [loan] must be a string (got 1042)"),
    ],
)
def test_metadata_refusals(entry: str, message: str) -> None:
    text = terms(f"[loan]\n{entry}\nprincipal = 100\nrate = 5\nperiods = 2\n")
    assert refusal(text).startswith(f"terms.toml {message}")


# -- the format version -------------------------------------------------------------------------


@pytest.mark.parametrize("version", ["2", "0", '"1"', "1.0", "true"])
def test_other_format_versions_are_refused_in_one_sentence(version: str) -> None:
    message = refusal(f"format = {version}\n" + textwrap.dedent(PLAIN))
    assert message.startswith("terms.toml line 1: format ")
    assert message.endswith(f"this version reads format = {FORMAT_VERSION}")
    assert message.count(". ") == 0


def test_a_missing_format_is_refused() -> None:
    message = refusal(textwrap.dedent(PLAIN))
    assert message.startswith("terms.toml: needs 'format = 1' at the top")


def test_a_format_key_inside_a_table_says_where_it_belongs() -> None:
    message = refusal("[loan]\nprincipal = 1\nformat = 1\n")
    assert (
        message == "terms.toml line 3: 'format = 1' belongs at the top of the file, before [loan]"
    )


# -- TOML syntax errors, with tomllib's line ----------------------------------------------------


@pytest.mark.parametrize(
    ("text", "line"),
    [
        ("format = 1\n[loan]\nprincipal = \n", 3),
        ("format = 1\n\n[loan]\nprincipal = 100\nrate = 5 %\n", 5),
        ("format = 1\n[loan\nprincipal = 100\n", 2),
        ('format = 1\n[loan]\nnote = "open\nprincipal = 100\n', 3),
        ("format = 1\n[loan]\n[loan]\n", 3),
        ("format = 1\n[loan]\nprincipal = 1\nrate = 2\nprincipal = 2\n", 5),
    ],
)
def test_syntax_errors_name_the_line(text: str, line: int) -> None:
    message = refusal(text)
    assert message.startswith(f"terms.toml line {line}")
    assert message.endswith("(not valid TOML)")


def test_an_unterminated_string_at_the_end_says_so() -> None:
    message = refusal('format = 1\n[loan]\nnote = """never closed\n')
    assert message == "terms.toml: Unterminated string at the end of the file (not valid TOML)"


def test_a_key_set_twice_at_the_end_is_placed_by_the_scanner() -> None:
    # tomllib places this one "at end of document"; the scanner finds the second 'a'.
    assert refusal("format = 1\na = 1\na = 2").startswith("terms.toml line 3: Cannot overwrite")


# -- unknown keys and tables --------------------------------------------------------------------


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        (
            "[loan]\nprincipal = 1\nprincpal = 1\n",
            "line 4: unknown key 'princpal' in [loan]; did you mean 'principal'?",
        ),
        (
            "[loan]\nprincipal = 1\n\n[dates]\nstrat = 2027-01-01\n",
            "line 6: unknown key 'strat' in [dates]; did you mean 'start'?",
        ),
        (
            "[loan]\nstart = 2027-01-01\n",
            "line 3: unknown key 'start' in [loan]; it belongs in [dates]",
        ),
        (
            "[loan]\nannual_rate = 0.05\n",
            "line 3: unknown key 'annual_rate' in [loan]; did you mean 'rate'?",
        ),
        (
            '[loan]\nstructure = "bullet"\n',
            "line 3: unknown key 'structure' in [loan]; did you mean 'kind' in [structure]?",
        ),
        (
            "[structure]\ngrwoth = 3\n",
            "line 3: unknown key 'grwoth' in [structure]; did you mean 'growth'?",
        ),
        ("[lone]\nprincipal = 1\n", "line 2: unknown table [lone]; did you mean [loan]?"),
        ("colour = 1\n[loan]\n", "line 2: unknown key 'colour' at the top"),
        (
            "[loan]\n[loan.dates]\nstart = 1\n",
            "line 3: unknown key 'dates' in [loan]; [dates] is a table of its own",
        ),
        ("loan.princpal = 5\n", "line 2: unknown key 'princpal' in [loan]; did you mean"),
    ],
)
def test_unknown_keys_name_the_key_its_line_and_a_suggestion(text: str, expected: str) -> None:
    assert refusal("format = 1\n" + text).startswith(f"terms.toml {expected}")


# -- wrong types --------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("entry", "key"),
    [
        ('periods = "abc"', "'periods' in [loan] must be a whole number"),
        ("periods = 12.5", "'periods' in [loan] must be a whole number"),
        ("periods = 12.0", "'periods' in [loan] must be a whole number"),
        ("periods = true", "'periods' in [loan] must be a whole number"),
        ("principal = [1, 2]", "'principal' in [loan] must be an amount"),
        ("rate = 2027-01-01", "'rate' in [loan] must be a percent"),
        ('years = "five"', "'years' in [loan] must be a number"),
        ("frequency = 12", "'frequency' in [loan] must be a string"),
        ("principal = { amount = 1 }", "'principal' in [loan] must be an amount"),
    ],
)
def test_wrong_types_name_the_key_and_its_line(entry: str, key: str) -> None:
    given = entry.split(" ", 1)[0]
    base = "".join(f"{k} = {v}\n" for k, v in (("principal", 100), ("rate", 5)) if k != given)
    text = terms(f"[loan]\n{base}{entry}\n")
    line = text.splitlines().index(entry) + 1
    assert refusal(text).startswith(f"terms.toml line {line}: {key}")


@pytest.mark.parametrize(
    ("entry", "key"),
    [
        ("start = 2027-01-15T09:30:00", "'start' in [dates] must be a date"),
        ("first_payment = 09:30:00", "'first_payment' in [dates] must be a date"),
        ('end_of_month = "yes"', "'end_of_month' in [dates] must be true or false"),
        ("semimonthly_days = [1, 15, 28]", "'semimonthly_days' in [dates] must be an array"),
        ('semimonthly_days = "1,15"', "'semimonthly_days' in [dates] must be an array"),
        ("holidays = 7", "'holidays' in [dates] must be a calendar code"),
    ],
)
def test_wrong_types_in_dates(entry: str, key: str) -> None:
    text = terms(f"{PLAIN}\n[dates]\n{entry}\n")
    line = text.splitlines().index(entry) + 1
    assert refusal(text).startswith(f"terms.toml line {line}: {key}")


def test_a_table_that_is_a_value_is_refused() -> None:
    assert refusal("format = 1\nloan = 5\n").startswith("terms.toml line 2: 'loan' must be a table")


# -- missing fields -----------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("body", "expected"),
    [
        ("[loan]\nrate = 5\nperiods = 12\n", "terms.toml: [loan] needs 'principal'"),
        ("[loan]\nprincipal = 100\nperiods = 12\n", "terms.toml: [loan] needs 'rate'"),
        ("[loan]\nprincipal = 100\nrate = 5\n", "terms.toml: [loan] needs 'periods'"),
        ("[dates]\nstart = 2027-01-01\n", "terms.toml: needs a [loan] table"),
    ],
)
def test_missing_fields(body: str, expected: str) -> None:
    assert refusal(terms(body)).startswith(expected)


def test_periods_and_years_together_are_refused_at_years() -> None:
    text = terms("[loan]\nprincipal = 100\nrate = 5\nperiods = 12\nyears = 1\n")
    assert refusal(text) == "terms.toml line 6: give 'periods' or 'years' in [loan], not both"


@pytest.mark.parametrize(
    ("years", "expected"),
    [
        ("2.55", "'years' 2.55 is not a whole number of monthly payments (30.6 payments)"),
        ("0", "'years' must be > 0 (got 0)"),
        ("9000", "'years' 9000 means 108,000 monthly payments, more than the 100,000"),
    ],
)
def test_years_refusals(years: str, expected: str) -> None:
    text = terms(f"[loan]\nprincipal = 100\nrate = 5\nyears = {years}\n")
    assert refusal(text).startswith(f"terms.toml line 5: {expected}")


# -- the Loan's own errors, placed and renamed --------------------------------------------------


@pytest.mark.parametrize(
    ("body", "line", "expected"),
    [
        ("[loan]\nprincipal = 100\nrate = -5\nperiods = 12\n", 4, "'rate' must be >= 0"),
        ("[loan]\nprincipal = 100\nrate = 1300\nperiods = 12\n", 4, "'rate' must be at most"),
        ("[loan]\nprincipal = 0\nrate = 5\nperiods = 12\n", 3, "'principal' must be > 0"),
        ("[loan]\nprincipal = 100.001\nrate = 5\nperiods = 12\n", 3, "'principal' must be a"),
        ("[loan]\nprincipal = 100\nrate = 5\nperiods = 0\n", 5, "'periods' must be a whole"),
        ('[loan]\nprincipal = 100\nrate = 5\nperiods = 2\ntiming = "late"\n', 6, "'timing'"),
        ('[loan]\nprincipal = 100\nrate = 5\nperiods = 2\nrounding = "x"\n', 6, "'rounding'"),
        (
            "[loan]\nprincipal = 1000\nrate = 12\nperiods = 12\nballoon = 2000\n",
            6,
            "'balloon' 2,000 would need a payment of zero or less",
        ),
        (
            '[loan]\nprincipal = 100\nrate = 5\nperiods = 2\n[structure]\nkind = "zig"\n',
            7,
            "'kind' must be one of 'level', 'equal-principal', 'bullet' (got 'zig')",
        ),
        (
            "[loan]\nprincipal = 1000\nrate = 12\nyears = 1\n[structure]\n"
            "interest_only_periods = 12\n",
            7,
            "'interest_only_periods' must be fewer than the 12 payments",
        ),
        (
            "[loan]\nprincipal = 1000\nrate = 12\nyears = 1\n[structure]\ngrowth = 3\nstep = 5\n",
            8,  # the second of the two
            "give 'growth' (geometric) or 'step' (arithmetic), not both",
        ),
        (
            "[loan]\nprincipal = 1000\nrate = 12\nyears = 1\npayment = 100\n"
            '[structure]\nkind = "bullet"\n',
            6,
            "structure 'bullet' needs 'periods' and no 'payment'",
        ),
        (
            '[loan]\nprincipal = 1000\nrate = 12\nyears = 1\n[dates]\nday_count = "actual/365"\n',
            7,
            "'day_count' 'actual/365' needs dates",
        ),
        (
            "[loan]\nprincipal = 1000\nrate = 12\nyears = 1\n[dates]\nstart = 2027-02-30\n",
            None,  # an impossible TOML date is a syntax error (line 7)
            "",
        ),
        (
            '[loan]\nprincipal = 1000\nrate = 12\nyears = 1\n[dates]\nstart = "2027-02-30"\n',
            7,
            "'start' is not a valid date: 2027-02-30",
        ),
        (
            "[loan]\nprincipal = 1000\nrate = 12\nyears = 1\n[dates]\n"
            "start = 2027-03-01\nfirst_payment = 2027-02-01\n",
            8,
            "'first_payment' 2027-02-01 must be after 'start'",
        ),
        (
            '[loan]\nprincipal = 1000\nrate = 12\nyears = 1\n[rates]\ncompounding = "often"\n',
            7,
            "'compounding'",
        ),
    ],
)
def test_loan_errors_carry_the_line_of_the_key_they_name(
    body: str, line: int | None, expected: str
) -> None:
    message = refusal(terms(body))
    if line is None:
        assert message.startswith("terms.toml line 7")
        return
    assert message.startswith(f"terms.toml line {line}: {expected}")
    for field in ("annual_rate", "fixed_payment", "payment_growth", "payment_step"):
        assert field not in message


def test_a_term_that_cannot_be_met_stays_no_solution() -> None:
    text = terms("[loan]\nprincipal = 100000\nrate = 12\npayment = 500\n")
    message = refusal(text, NoSolution)
    assert message.startswith("terms.toml: the payment 500.00 does not cover")


# -- reading files ------------------------------------------------------------------------------


def test_read_terms_from_a_file(tmp_path: Path) -> None:
    path = tmp_path / "terms.toml"
    path.write_text(terms(PLAIN), encoding="utf-8")
    read = read_terms(path)
    assert read.source == path
    assert read.loan.payment == Decimal("374.23")


def test_a_byte_order_mark_is_accepted(tmp_path: Path) -> None:
    path = tmp_path / "terms.toml"
    path.write_bytes(b"\xef\xbb\xbf" + terms(PLAIN).encode())
    assert read_terms(path).loan.periods == 60


def test_errors_name_the_file_as_given(tmp_path: Path) -> None:
    path = tmp_path / "bad.toml"
    path.write_text("format = 1\n[loan]\nprincpal = 1\n", encoding="utf-8")
    with pytest.raises(InvalidTerms, match=r"bad\.toml line 3: unknown key 'princpal'"):
        read_terms(str(path))


@pytest.mark.parametrize(
    ("make", "expected"),
    [
        (lambda p: p / "absent.toml", "absent.toml: no such terms file"),
        (lambda p: p, "is a directory, not a terms file"),
    ],
)
def test_a_missing_file_or_a_directory_is_one_sentence(
    tmp_path: Path, make: object, expected: str
) -> None:
    assert callable(make)
    with pytest.raises(InvalidTerms) as caught:
        read_terms(make(tmp_path))
    assert str(caught.value).endswith(expected)
    assert caught.value.__cause__ is None


def test_text_that_is_not_utf8_names_its_line(tmp_path: Path) -> None:
    path = tmp_path / "latin.toml"
    path.write_bytes(b'format = 1\n[loan]\nborrower = "M\xfcller"\n')
    with pytest.raises(InvalidTerms, match=r"latin\.toml line 3: the file is not UTF-8 text"):
        read_terms(path)


def test_an_oversized_file_is_refused(tmp_path: Path) -> None:
    path = tmp_path / "big.toml"
    path.write_text(terms(PLAIN) + "#" * amort.terms.MAX_FILE_BYTES, encoding="utf-8")
    with pytest.raises(InvalidTerms, match="too large for one loan's terms"):
        read_terms(path)


# -- the example files --------------------------------------------------------------------------


def test_the_equipment_example() -> None:
    read = read_terms(EXAMPLES / "tallowmere_equipment.toml")
    assert read.loan == Loan(
        principal=84_500,
        annual_rate="8.15%",
        periods=20,
        frequency="quarterly",
        balloon=12_000,
        timing="advance",
        start=date(2027, 1, 31),
        end_of_month=True,
        compounding="monthly",
    )
    assert read.loan.reconciliation().passed
    assert read.metadata["borrower"] == "Quillfeather Print & Bindery"
    assert read.metadata["note"].startswith("Two-colour offset press.")


def test_the_graduated_example() -> None:
    read = read_terms(EXAMPLES / "tallowmere_graduated.toml")
    assert read.loan == Loan(
        principal=22_000,
        annual_rate="9.4%",
        periods=96,
        frequency="semimonthly",
        start=date(2027, 5, 3),
        first_payment=date(2027, 5, 31),
        day_count="actual/365",
        semimonthly_days=(15, "end"),
        business_days="modified-following",
        holidays="GB",
        payment_step=15,
        growth_every=24,
    )
    assert read.loan.reconciliation().passed
    payments = read.loan.schedule()["payment"]
    assert payments.iloc[24] - payments.iloc[23] == pytest.approx(15.0)


@pytest.mark.parametrize("path", sorted(EXAMPLES.glob("*.toml")), ids=lambda p: p.name)
def test_every_example_file_parses_and_reconciles(path: Path) -> None:
    read = read_terms(path)
    assert read.loan.reconciliation().passed
    assert "Tallowmere" in path.read_text(encoding="utf-8")


# -- the key-line scanner -----------------------------------------------------------------------


SCANNED = '''\
format = 1
# principal = 5 (a comment, not a key)

[loan]
note = """
principal = "inside a multi-line string"
"""
literal = \'\'\'
rate = 1
\'\'\'
escaped = "a \\" rate = 2"
  principal   = 100
"rate" = 5
[ dates ]
start = 2027-01-01
[structure.sub]
kind = 1
[[rows]]
kind = 2
'''


@pytest.mark.parametrize(
    ("path", "line"),
    [
        (("format",), 1),
        (("loan",), 4),
        (("loan", "note"), 5),
        (("loan", "principal"), 12),
        (("loan", "rate"), 13),
        (("dates",), 14),
        (("dates", "start"), 15),
        (("structure", "sub", "kind"), 17),
        (("structure", "kind"), None),
        (("rows", "kind"), 19),
        (("principal",), None),
    ],
)
def test_key_line_finds_keys_within_their_table(path: tuple[str, ...], line: int | None) -> None:
    assert key_line(SCANNED, *path) == line


def test_key_line_reads_dotted_keys_and_skips_inline_tables() -> None:
    text = "format = 1\nloan.principal = 5\ndates = { start = 2027-01-01 }\n"
    assert key_line(text, "loan", "principal") == 2
    assert key_line(text, "dates") == 3
    assert key_line(text, "dates", "start") is None


def test_a_key_inside_an_inline_table_is_placed_on_its_table_line() -> None:
    text = "format = 1\nloan = { principal = 1, rate = 5, periods = 12, colour = 1 }\n"
    assert refusal(text).startswith("terms.toml line 2: unknown key 'colour' in [loan]")


def test_the_scanner_agrees_with_tomllib_on_the_example_files() -> None:
    """Every key tomllib reads from an example is found by the scanner, on a line that sets it."""
    import tomllib

    for path in EXAMPLES.glob("*.toml"):
        text = path.read_text(encoding="utf-8")
        for table, values in tomllib.loads(text).items():
            if not isinstance(values, dict):
                assert key_line(text, table) is not None
                continue
            for key in values:
                line = key_line(text, table, key)
                assert line is not None, (path.name, table, key)
                assert text.splitlines()[line - 1].lstrip().startswith(key)


def test_every_key_name_belongs_to_one_table() -> None:
    names = [key for keys in amort.terms._SCHEMA.values() for key in keys]
    assert len(names) == len(set(names))


# -- never a traceback --------------------------------------------------------------------------


def toml_value(value: object) -> str:
    """A value written as TOML (enough for the fuzz test below)."""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, (int, Decimal)):
        return str(value)
    if isinstance(value, (date, time)):
        return value.isoformat()
    if isinstance(value, list):
        return "[" + ", ".join(toml_value(item) for item in value) + "]"
    return json.dumps(value, ensure_ascii=False)


VALUES = st.one_of(
    st.integers(-3, 400),
    st.integers(),
    st.decimals(allow_nan=False, allow_infinity=False, places=3, min_value=-1000, max_value=1e6),
    st.sampled_from(
        [
            "6.5%",
            "18,500.00",
            "monthly",
            "advance",
            "bullet",
            "equal-principal",
            "actual/365",
            "following",
            "US",
            "XX-YY",
            "end",
            "2027-01-31",
            "2027-02-30",
            "continuous",
            "",
            "abc",
        ]
    ),
    st.text(max_size=8),
    st.booleans(),
    st.dates(min_value=date(2020, 1, 1), max_value=date(2040, 12, 31)),
    st.just(time(9, 30)),
    st.lists(st.one_of(st.integers(0, 32), st.sampled_from(["end", "US", "NY"])), max_size=3),
)
KEYS = {
    table: st.dictionaries(st.sampled_from([*keys, "extra"]), VALUES, max_size=6)
    for table, keys in amort.terms._SCHEMA.items()
    if table
}


@settings(max_examples=150)
@given(
    loan=KEYS["loan"],
    dates=KEYS["dates"],
    structure=KEYS["structure"],
    rates=KEYS["rates"],
    version=st.sampled_from([1, 1, 1, 2]),
)
def test_any_document_gives_a_loan_or_one_placed_sentence(
    loan: dict[str, object],
    dates: dict[str, object],
    structure: dict[str, object],
    rates: dict[str, object],
    version: int,
) -> None:
    lines = [f"format = {version}"]
    for name, table in (("loan", loan), ("dates", dates), ("structure", structure)):
        lines.append(f"[{name}]")
        lines.extend(f"{key} = {toml_value(value)}" for key, value in table.items())
    lines.append("[rates]")
    lines.extend(f"{key} = {toml_value(value)}" for key, value in rates.items())
    try:
        read = parse_terms("\n".join(lines) + "\n", source="fuzz.toml")
    except AmortError as exc:
        message = str(exc)
        assert message.startswith("fuzz.toml")
        assert "\n" not in message.split(":", 1)[0]
        for field in ("annual_rate", "fixed_payment", "payment_growth", "payment_step"):
            assert f"'{field}'" not in message
    else:
        assert isinstance(read.loan, Loan)


EVENTS_FILE = """format = 1
[loan]
principal = 20000
rate = 6
periods = 24

[dates]
start = 2027-01-10

[[events]]
kind = "extra"
period = 6
amount = 5000
recast = true

[[events]]
kind = "reset"
on = 2027-12-01
rate = 8.5

[[events]]
kind = "holiday"
period = 3
count = 2
"""


def test_events_in_a_terms_file_equal_the_same_events_as_objects() -> None:
    from amort import Loan
    from amort.events import ExtraPrincipal, PaymentHoliday, RateReset

    terms = parse_terms(EVENTS_FILE, source="terms.toml")
    same = Loan(
        principal=20_000, annual_rate="6%", periods=24, start="2027-01-10",
        events=(
            ExtraPrincipal(period=6, amount=5000, recast=True),
            RateReset(on="2027-12-01", annual_rate="8.5%"),
            PaymentHoliday(period=3, count=2),
        ),
    )  # fmt: skip
    assert terms.loan.schedule().equals(same.schedule())
    assert terms.loan.reconciliation().passed


@pytest.mark.parametrize(
    ("event", "line", "needle"),
    [
        ('kind = "extr"\nperiod = 2\n', 6, "'kind' must be one of"),
        ('kind = "extra"\nperiod = 2\namount = 5\nrecst = true\n', 6, "did you mean 'recast'"),
        ('kind = "reset"\nperiod = 2\nrate = -3\n', 9, "'rate' must be >= 0"),
        ('kind = "holiday"\nperiod = 2\non = 2027-01-01\n', 6, "one of them"),
    ],
)
def test_bad_events_name_their_line(event: str, line: int, needle: str) -> None:
    text = "format = 1\n[loan]\nprincipal = 1000\nrate = 5\nperiods = 12\n[[events]]\n" + event
    with pytest.raises(InvalidTerms) as caught:
        parse_terms(text, source="terms.toml")
    assert str(caught.value).startswith(f"terms.toml line {line}: ")
    assert needle in str(caught.value)


def test_structure_table_takes_listed_payments_months_and_a_cap() -> None:
    from amort import Loan

    listed = parse_terms(
        "format = 1\n[loan]\nprincipal = 5000\nrate = 9\n"
        "[structure]\npayments = [500, 500, 500, 1500, 1500, 1000]\n",
        source="terms.toml",
    )
    same = Loan(principal=5000, annual_rate="9%", custom_payments=(500, 500, 500, 1500, 1500, 1000))
    assert listed.loan.schedule().equals(same.schedule())
    seasonal = parse_terms(
        "format = 1\n[loan]\nprincipal = 20000\nrate = 8\nperiods = 12\n[dates]\n"
        'start = 2027-05-10\nday_count = "30/360"\n[structure]\npayment_months = [8, 9, 10, 11]\n',
        source="terms.toml",
    )
    assert seasonal.loan.payment_months == (8, 9, 10, 11)
    assert seasonal.loan.reconciliation().passed
    capped = parse_terms(
        "format = 1\n[loan]\nprincipal = 100000\nrate = 12\nyears = 30\n[structure]\n"
        'growth = 7.5\nnegative_amortisation_cap = "105%"\n',
        source="terms.toml",
    )
    assert capped.loan.summary()["cap_reached_period"] == 11
    with pytest.raises(InvalidTerms, match=r"terms.toml line 7: 'payments' in \[structure\]"):
        parse_terms(
            "format = 1\n[loan]\nprincipal = 5000\nrate = 9\nperiods = 12\n[structure]\n"
            "payments = [500, true]\n",
            source="terms.toml",
        )


# -- [[fees]] (for amort apr) --------------------------------------------------------------------


def test_fees_are_read_in_order_with_their_marks() -> None:
    read = parse_terms(
        terms(
            PLAIN
            + """
            [[fees]]
            name = "origination"
            amount = 250
            financed = true

            [[fees]]
            name = "appraisal"
            amount = "400.00"
            finance_charge = false
            """
        )
    )
    assert [(f.name, f.amount, f.finance_charge, f.financed) for f in read.fees] == [
        ("origination", Decimal(250), True, True),
        ("appraisal", Decimal("400.00"), False, False),
    ]
    assert parse_terms(terms(PLAIN)).fees == ()


@pytest.mark.parametrize(
    ("fees", "message"),
    [
        ('[[fees]]\nname = "a"\namount = -1\n', "terms.toml line 9: fee 'a': 'amount' must be > 0"),
        ('[[fees]]\nname = "a"\n', "terms.toml line 7: fee 1 needs 'amount'"),
        (
            '[[fees]]\nname = "a"\namount = 1\n[[fees]]\nname = "b"\nammount = 2\n',
            "terms.toml line 12: fee 2: unknown key 'ammount'; did you mean 'amount'?",
        ),
        (
            '[[fees]]\nname = "a"\namount = 1\nfinanced = "yes"\n',
            "terms.toml line 10: fee 1: 'financed' must be true or false (got 'yes')",
        ),
        (
            '[[fees]]\nname = "a"\namount = 1\nfinanced = true\nat_closing = true\n',
            "terms.toml line 7: fee 'a' is marked both financed and paid at closing",
        ),
        (
            '[[fees]]\nname = "a"\namount = 1\n[[fees]]\nname = "A"\namount = 2\n',
            "terms.toml line 11: fee 2: the name 'A' is already used by fee 1",
        ),
    ],
)
def test_fee_errors_name_the_line(fees: str, message: str) -> None:
    # PLAIN ends on line 6, so the first [[fees]] header is line 7.
    assert message in refusal(terms(PLAIN) + fees)


def test_fees_must_be_an_array_of_tables() -> None:
    message = refusal("format = 1\nfees = 5\n" + textwrap.dedent(PLAIN))
    assert "terms.toml line 2: 'fees' must be [[fees]] tables, one a fee" in message

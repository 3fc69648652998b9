"""Property tests: damaged historical annual spectral sets (swden w, swdir d, swdir2 i, swr1 j, swr2 k).

Clean sets follow the published layout (docs/formats.md §1.5: one header line whose column names
after the time columns are the frequencies; plain values; r1/r2 stored ×100), in the three time
layouts (`#YY MM DD hh mm` 2007+, `YYYY MM DD hh mm` 2005-06, `YYYY MM DD hh` 2000-04). Rows are then
damaged: cut short at a token boundary, a junk token put in or swapped in, NaN, a negative value, a
value dropped (wrong count), an impossible time; others are duplicated later in the file with other
values, or moved to the end (out of order).

The reader must never raise; it must build no record whose values differ from the clean ones; a
record whose density row was damaged must not exist, and one whose coefficient row was damaged must
keep its density without coefficients (never half the coefficients); every undamaged time is kept
complete; every damaged or duplicate line is rejected at its own file and line, with field and reason.

A cut *inside* the last number ("45.00" -> "4") leaves a valid shorter number that no reader can tell
from data, so the generator cuts at whitespace only.
"""

from __future__ import annotations

import os
from datetime import UTC, datetime, timedelta

import numpy as np
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from app.formats.ndbc_historical import parse_historical_set

FREQ = np.array([0.0325, 0.0375, 0.05, 0.08, 0.1, 0.2, 0.3, 0.485])
T0 = datetime(2031, 5, 1, tzinfo=UTC)
LETTERS = ("w", "d", "i", "j", "k")
FIELD = {"w": "density", "d": "alpha1_deg", "i": "alpha2_deg", "j": "r1", "k": "r2"}
LAYOUTS = {  # header time columns, row time format
    "2007+": ("#YY  MM DD hh mm", "%Y %m %d %H %M"),
    "2005-06": ("YYYY MM DD hh mm", "%Y %m %d %H %M"),
    "2000-04": ("YYYY MM DD hh", "%Y %m %d %H"),
}
DAMAGES = ("truncate", "junk_swap", "junk_insert", "nan", "negative", "drop_value", "bad_time")
JUNK = ("x#7", "--", "1.2.3", "MM", "abc", "inf", "1e999", "(0.05)")


def clean_values(n):
    """Per time: file values as written (r ×100) and the expected parsed values (r in 0..1).

    No value is zero, so a negated value is always a detectable (negative) value.
    """
    k = np.arange(FREQ.size)
    out = []
    for h in range(n):
        dens = np.round(0.05 + 0.3 * k + 0.1 * h, 2)
        a1 = np.round(200.0 + 10.0 * k + h, 1)
        a2 = np.round(190.0 + 9.0 * k, 1)
        r1 = np.round(30.0 + 5.0 * k + h, 2)  # ×100 in the file
        r2 = np.round(20.0 + 3.0 * k, 2)
        out.append({"w": dens, "d": a1, "i": a2, "j": r1, "k": r2})
    return out


def _fmt(letter, values):
    dec = 1 if letter in "di" else 2
    return [f"{v:.{dec}f}" for v in values]


def _head(layout):
    cols, _ = LAYOUTS[layout]
    return cols + " " + " ".join(f"{f:.4f}".lstrip("0") for f in FREQ)


def damage(tokens, n_time, kind, pos):
    toks = list(tokens)
    i = n_time + pos % FREQ.size  # a value column
    if kind == "truncate":
        return toks[: 1 + pos % (len(toks) - 1)]
    if kind == "junk_swap":
        toks[i] = JUNK[pos % len(JUNK)]
    elif kind == "junk_insert":
        toks.insert(i, JUNK[pos % len(JUNK)])
    elif kind == "nan":
        toks[i] = ("nan", "NaN", "-nan")[pos % 3]
    elif kind == "negative":
        toks[i] = "-" + toks[i]
    elif kind == "drop_value":
        del toks[i]
    else:  # bad_time: month 13 or hour 25
        toks[1 if pos % 2 else 3] = "13" if pos % 2 else "25"
    return toks


@st.composite
def damaged_sets(draw):
    n = draw(st.integers(3, 6))
    layout = draw(st.sampled_from(sorted(LAYOUTS)))
    n_time = len(LAYOUTS[layout][0].split())
    values = clean_values(n)
    cells = st.tuples(st.sampled_from(LETTERS), st.integers(0, n - 1))
    damaged = draw(st.dictionaries(cells, st.tuples(st.sampled_from(DAMAGES), st.integers(0, 400)), max_size=n))
    others = draw(st.dictionaries(cells.filter(lambda c: c not in damaged), st.sampled_from(["duplicate", "move"]),
                                  max_size=3))
    files = {}
    for letter in LETTERS:
        rows = []  # (tokens, tag, hour); tag None | "damaged" | "duplicate"
        for h in range(n):
            t = T0 + timedelta(hours=h)
            tokens = t.strftime(LAYOUTS[layout][1]).split() + _fmt(letter, values[h][letter])
            if (letter, h) in damaged:
                kind, pos = damaged[(letter, h)]
                rows.append((damage(tokens, n_time, kind, pos), "damaged", h))
            else:
                rows.append((tokens, None, h))
        tail = []
        for (lt, h), op in others.items():
            if lt != letter:
                continue
            if op == "move":  # out of order: the row goes to the end, untouched
                idx = next(j for j, r in enumerate(rows) if r[2] == h and r[1] is None)
                tail.insert(0, rows.pop(idx))
            else:  # a later row with the same time but other (valid) values
                v = values[h][letter] * (1.01 if letter in "di" else 0.5)
                tokens = (T0 + timedelta(hours=h)).strftime(LAYOUTS[layout][1]).split() + _fmt(letter, v)
                tail.append((tokens, "duplicate", h))
        rows += tail
        files[f"s9{letter}2031.txt"] = [_head(layout)] + rows
    return values, files, damaged, n


def _text(lines):
    head, rows = lines[0], lines[1:]
    return "\n".join([head] + ["  ".join(toks) for toks, _, _ in rows]) + "\n"


@settings(max_examples=int(os.environ.get("SHOALCAST_FUZZ_EXAMPLES", "120")), deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(damaged_sets())
def test_damaged_historical_sets_give_good_rows_and_rejects(case):
    values, files, damaged, n = case
    texts = {name: _text(lines) for name, lines in files.items()}
    res = parse_historical_set(texts)  # must not raise

    # every reject names a real file, a data line, a field and a reason, and quotes that line
    for rej in res.rejects:
        assert rej.file in texts and isinstance(rej.line, int) and rej.line >= 2
        assert rej.field and rej.reason
        assert texts[rej.file].splitlines()[rej.line - 1] == rej.text
    # every damaged or duplicate line is rejected where it is
    rejected_at = {(r.file, r.line): r for r in res.rejects}
    for name, lines in files.items():
        for ln, (_, tag, _) in enumerate(lines[1:], start=2):
            if tag is not None:
                assert (name, ln) in rejected_at, (name, ln, tag)
                if tag == "duplicate":
                    assert rejected_at[(name, ln)].field == "time"
                    assert "duplicate" in rejected_at[(name, ln)].reason

    times = [r.time for r in res.records]
    assert times == sorted(times) and len(set(times)) == len(times)
    got = {int((r.time - T0).total_seconds() // 3600): r for r in res.records}
    for h in range(n):
        hit = {lt for lt in LETTERS if (lt, h) in damaged}
        if "w" in hit:  # no density row: no record at all
            assert h not in got
            continue
        rec = got[h]  # the density row was clean: the record is kept
        assert rec.station == "s9"
        np.testing.assert_array_equal(rec.frequency, FREQ)
        np.testing.assert_allclose(rec.density, values[h]["w"])  # never altered values
        if hit:  # a coefficient row was damaged: all four or none
            assert not rec.has_coefficients
        else:
            assert rec.has_coefficients
            for lt in "di":
                np.testing.assert_allclose(getattr(rec, FIELD[lt]), values[h][lt])
            for lt in "jk":  # ×100 in the file (docs/formats.md §1.5)
                np.testing.assert_allclose(getattr(rec, FIELD[lt]), values[h][lt] * 0.01)
    assert any("divided by 100" in note for note in res.notes)


def test_a_damaged_header_rejects_only_that_file():
    values = clean_values(2)
    head = _head("2007+")
    good = {lt: head + "\n" + "\n".join(
        f"2031 05 01 {h:02d} 00 " + " ".join(_fmt(lt, values[h][lt])) for h in range(2)) + "\n" for lt in LETTERS}
    texts = {f"s9{lt}2031.txt": good[lt] for lt in LETTERS}
    texts["s9j2031.txt"] = "#YY  MM DD hh mm  .0325 abc .0500\n" + texts["s9j2031.txt"].split("\n", 1)[1]
    res = parse_historical_set(texts)
    (rej,) = [r for r in res.rejects if r.file == "s9j2031.txt"]
    assert rej.line == 1 and rej.field == "header" and "frequenc" in rej.reason
    assert len(res.records) == 2 and not any(r.has_coefficients for r in res.records)
    np.testing.assert_allclose(res.records[1].density, values[1]["w"])

#!/usr/bin/env python3
"""Write the hostile-input corpus of tests/hostile/ and its manifest (issue 13).

Every file is a crafted input that once made dwarfbound abort, hang, print a panic, swallow rows
or answer with an unhelpful message, or a neighbour of one; `tests/hostile/manifest.toml` records
for each the command to run and the outcome required of it (exit code, rows in and quarantined,
quarantine reasons, or key words of the message). `tests/hostile_corpus.rs` runs them all.
The catalogue rows are invented (fictional objects, not measurements).

Binary files (FITS, Parquet, VOTable BINARY) are written here so that they can be regenerated:
text files are written here too, so that the whole corpus comes from one place.

Run from the repository root:   python3 tools/make_hostile_corpus.py
Needs numpy, astropy and pyarrow from PyPI (pip install numpy astropy pyarrow; written with
numpy 2.4.6, astropy 8.0.2, pyarrow 26.0.1). The expectations below are requirements, not
recordings: a change in dwarfbound that breaks one is a regression or a deliberate contract change.
"""

import base64
import datetime
import decimal
import io
import os
import shutil
import struct

import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq
from astropy.io import fits
from astropy.io.votable import from_table
from astropy.table import Table

OUT = os.path.join("tests", "hostile")
FILES = os.path.join(OUT, "files")

CASES = []


def case(name, item, args, exit, rows_in=None, quarantined=None, reasons=(), message=(),
         note=""):
    """Registers one corpus entry; `args` use {out} for the output folder."""
    CASES.append(dict(name=name, item=item, args=list(args), exit=exit, rows_in=rows_in,
                      quarantined=quarantined, reasons=list(reasons), message=list(message),
                      note=note))


def write(name, data):
    path = os.path.join(FILES, name)
    mode = "wb" if isinstance(data, (bytes, bytearray)) else "w"
    kwargs = {} if mode == "wb" else {"encoding": "utf-8", "newline": ""}
    with open(path, mode, **kwargs) as f:
        f.write(data)
    return "tests/hostile/files/" + name


def vet(path, *extra):
    return ["vet", path, *extra, "--out", "{out}"]


HEADER = "id,class,mass,mass_err\n"
ROWS = [("HX-1", "brown_dwarf", 0.050, 0.005), ("HX-2", "brown_dwarf", 0.060, 0.006),
        ("HX-3", "hburning", 0.090, 0.010)]


def csv_text(rows=ROWS, header=HEADER):
    return header + "".join(f"{i},{c},{m},{e}\n" for i, c, m, e in rows)


def many_rows(n):
    return [(f"HX-{k}", "brown_dwarf", 0.05 + 0.0001 * k, 0.005) for k in range(1, n + 1)]


def csv_cases():
    rows = many_rows(300)
    text = csv_text(rows).splitlines(keepends=True)
    text[2] = '"' + text[2]  # data row 2 opens a quote that never closes
    case("csv_stray_quote_row2", "13.5", vet(write("csv_stray_quote_row2.csv", "".join(text))),
         0, rows_in=300, quarantined=1, reasons=["unbalanced or stray quote"],
         message=["300 rows in, 299 accepted, 1 quarantined"])
    text = csv_text(rows).splitlines(keepends=True)
    text[100] = text[100].replace("HX-100", 'HX"100')
    case("csv_stray_quote_inside_field", "13.5",
         vet(write("csv_stray_quote_inside_field.csv", "".join(text))), 0, rows_in=300,
         quarantined=1, reasons=["unbalanced or stray quote"])
    case("csv_quoted_fields_ok", "13.5", vet(write(
        "csv_quoted_fields_ok.csv",
        'id,class,mass,mass_err,ref\n"HX-1",brown_dwarf,0.05,0.005,"a, b ""c"""\n')),
        0, rows_in=1, quarantined=0)
    case("csv_quote_spanning_lines", "13.5", vet(write(
        "csv_quote_spanning_lines.csv",
        'id,class,mass,mass_err,ref\nHX-1,brown_dwarf,0.05,0.005,"two\nlines"\n'
        "HX-2,brown_dwarf,0.06,0.006,\n")),
        0, rows_in=3, quarantined=2, reasons=["unbalanced or stray quote"],
        note="quoted fields cannot span lines: both halves are quarantined, the next row read")
    case("csv_header_unbalanced_quote", "13.5",
         vet(write("csv_header_unbalanced_quote.csv", 'id,"class,mass,mass_err\nA,b,1,1\n')),
         2, message=["header", "quote"])
    semi = csv_text().replace(",", ";")
    case("csv_semicolon_delimited", "13.9", vet(write("csv_semicolon_delimited.csv", semi)), 2,
         message=["semicolon-delimited"])
    case("csv_tab_delimited", "13.9",
         vet(write("csv_tab_delimited.csv", csv_text().replace(",", "\t"))), 2,
         message=["tab-delimited"])
    case("csv_utf16le_bom", "13.9",
         vet(write("csv_utf16le_bom.csv", csv_text().encode("utf-16"))), 2, message=["UTF-16"])
    case("csv_utf16be_no_bom", "13.9",
         vet(write("csv_utf16be_no_bom.csv", csv_text().encode("utf-16-be"))), 2,
         message=["UTF-16"])
    lookalike = [("Gl 229B", "brown_dwarf", 0.05, 0.005),
                 ("Gl\u200b 229B", "brown_dwarf", 0.06, 0.006),
                 ("HX-3", "hburning", 0.09, 0.01)]
    case("csv_id_zero_width_space", "13.9",
         vet(write("csv_id_zero_width_space.csv", csv_text(lookalike))), 0, rows_in=3,
         quarantined=2, reasons=["after Unicode normalisation"])
    nfc = [("Ren\u00e9e-1", "brown_dwarf", 0.05, 0.005), ("Rene\u0301e-1", "brown_dwarf", 0.06,
                                                          0.006)]
    case("csv_id_nfc_nfd", "13.9", vet(write("csv_id_nfc_nfd.csv", csv_text(nfc))), 0,
         rows_in=2, quarantined=2, reasons=["after Unicode normalisation"])
    bom = [("HX-1", "brown_dwarf", 0.05, 0.005), ("\ufeffHX-1", "brown_dwarf", 0.06, 0.006),
           ("HX-3", "hburning", 0.09, 0.01)]
    case("csv_id_bom_inside", "13.9", vet(write("csv_id_bom_inside.csv", csv_text(bom))), 0,
         rows_in=3, quarantined=2, reasons=["after Unicode normalisation"])
    nul = [("HX-1", "brown_dwarf", 0.05, 0.005), ("HX-1\0", "brown_dwarf", 0.06, 0.006)]
    case("csv_id_nul", "13.9", vet(write("csv_id_nul.csv", csv_text(nul))), 0, rows_in=2,
         quarantined=2, reasons=["after Unicode normalisation"])
    soft = [("HX-1", "brown_dwarf", 0.05, 0.005), ("HX\u00ad-1", "brown_dwarf", 0.06, 0.006),
            ("HX-\u20601", "brown_dwarf", 0.06, 0.006)]
    case("csv_id_soft_hyphen_word_joiner", "13.9",
         vet(write("csv_id_soft_hyphen_word_joiner.csv", csv_text(soft))), 0, rows_in=3,
         quarantined=3, reasons=["after Unicode normalisation"])
    dup = [("HX-1", "brown_dwarf", 0.05, 0.005), ("HX-1", "brown_dwarf", 0.06, 0.006)]
    case("csv_id_exact_duplicate", "13.9", vet(write("csv_id_exact_duplicate.csv",
                                                     csv_text(dup))), 0, rows_in=2,
         quarantined=1, reasons=["duplicate id within catalogue"])
    invisible = [("\u200b\u200d", "brown_dwarf", 0.05, 0.005), ("HX-2", "brown_dwarf", 0.06,
                                                               0.006)]
    case("csv_id_only_invisible", "13.9",
         vet(write("csv_id_only_invisible.csv", csv_text(invisible))), 0, rows_in=2,
         quarantined=1, reasons=["missing id"])
    case("csv_both_error_kinds_in_a_row", "13.9", vet(write(
        "csv_both_error_kinds_in_a_row.csv",
        "id,class,mass,mass_err,mass_err_lo,mass_err_hi\n"
        "HX-1,brown_dwarf,0.05,0.005,0.004,0.006\nHX-2,brown_dwarf,0.06,0.006,,\n"
        "HX-3,brown_dwarf,0.06,,0.004,0.007\n")), 0, rows_in=3, quarantined=1,
        reasons=["both mass_err and mass_err_lo/mass_err_hi given"])
    case("csv_empty_unit_in_header", "13.9", vet(write(
        "csv_empty_unit_in_header.csv",
        "id,class,mass[],mass_err[ ]\nHX-1,brown_dwarf,0.05,0.005\n")), 0, rows_in=1,
        quarantined=0)
    bad_utf8 = (HEADER + "HX-1,brown_dwarf,0.05,0.005\n").encode() + b"HX-\xff\xfe,brown_dwarf,0.06,0.006\n"
    case("csv_invalid_utf8_cell", "13.9", vet(write("csv_invalid_utf8_cell.csv", bad_utf8)), 0,
         rows_in=2, quarantined=1, reasons=["not valid UTF-8"])
    case("csv_empty_file", "13.9", vet(write("csv_empty_file.csv", "")), 2,
         message=["no header line"])
    case("csv_header_only", "13.9", vet(write("csv_header_only.csv", HEADER)), 0, rows_in=0,
         quarantined=0)
    case("csv_crlf_line_ends", "13.5", vet(write("csv_crlf_line_ends.csv",
                                                csv_text().replace("\n", "\r\n"))), 0,
         rows_in=3, quarantined=0)
    case("csv_wrong_field_counts", "13.5", vet(write(
        "csv_wrong_field_counts.csv",
        HEADER + "HX-1,brown_dwarf,0.05\nHX-2,brown_dwarf,0.06,0.006,extra\n"
        "HX-3,hburning,0.09,0.01\n")), 0, rows_in=3, quarantined=2, reasons=["expected 4 fields"])
    case("csv_nan_and_inf", "13.9", vet(write(
        "csv_nan_and_inf.csv", HEADER + "HX-1,brown_dwarf,NaN,0.005\nHX-2,brown_dwarf,inf,0.006\n"
        "HX-3,hburning,1e999,0.01\n")), 0, rows_in=3, quarantined=3, reasons=["not finite"])
    case("csv_binary_garbage", "13.9",
         vet(write("csv_binary_garbage.csv", bytes(range(256)) * 4)), 2,
         message=["csv_binary_garbage.csv"])
    case("csv_very_long_id", "13.9", vet(write(
        "csv_very_long_id.csv", HEADER + "X" * 200_000 + ",brown_dwarf,0.05,0.005\n")), 0,
        rows_in=1, quarantined=0)


def map_cases():
    data = write("map_base.csv", "id,class,m,e,notes\nHX-1,brown_dwarf,0.05,0.005,x\n")
    def m(name, text):
        return write(name, text)
    case("map_mass_and_err_one_column", "13.9",
         vet(data, "--map", m("map_mass_and_err_one_column.toml",
                              '[columns]\nmass = "m"\nmass_err = "m"\n')), 2,
         message=["`mass`", "`mass_err`", "both mapped", "`m`"])
    case("map_id_and_ref_one_column", "13.9",
         vet(data, "--map", m("map_id_and_ref_one_column.toml",
                              '[columns]\nmass = "m"\nmass_err = "e"\nref = "id"\n')), 2,
         message=["`id`", "`ref`", "both mapped"])
    case("map_empty_unit_is_default", "13.9",
         vet(data, "--map", m("map_empty_unit_is_default.toml",
                              '[columns]\nmass = "m"\nmass_err = "e"\n[units]\nmass = ""\n')),
         0, rows_in=1, quarantined=0)
    case("map_unknown_key", "13.9",
         vet(data, "--map", m("map_unknown_key.toml", '[columns]\nmas = "m"\n')), 2,
         message=["`mas`"])
    case("map_bad_toml", "13.9",
         vet(data, "--map", m("map_bad_toml.toml", '[columns\nmass = "m"\n')), 2,
         message=["line 1"])
    case("map_absent_column", "13.9",
         vet(data, "--map", m("map_absent_column.toml", '[columns]\nmass = "mass_jup"\n')), 2,
         message=["mass_jup", "not in the file"])
    case("map_wrong_dimension_unit", "13.9",
         vet(data, "--map", m("map_wrong_dimension_unit.toml",
                              '[columns]\nmass = "m"\nmass_err = "e"\n[units]\nmass = "km"\n')),
         2, message=["km"])
    case("map_binary_garbage", "13.9",
         vet(data, "--map", m("map_binary_garbage.toml", b"\x00\xff[columns]\x00")), 2,
         message=["column map"])


def ecsv_header(cols):
    lines = ["# %ECSV 1.0", "# ---", "# datatype:"]
    for name, dtype, unit in cols:
        lines.append(f"# - {{name: {name}, datatype: {dtype}" + (f", unit: {unit}" if unit else "") + "}")
    lines.append("# schema: astropy-2.0")
    return "\n".join(lines) + "\n"


ECSV_COLS = [("id", "string", None), ("class", "string", None), ("mass", "float64", "solMass"),
             ("mass_err", "float64", "solMass")]


def ecsv_cases():
    body = "id class mass mass_err\nHX-1 brown_dwarf 0.05 0.005\nHX-2 brown_dwarf 0.06 0.006\n"
    case("ecsv_valid", "13.9", vet(write("ecsv_valid.ecsv", ecsv_header(ECSV_COLS) + body)), 0,
         rows_in=2, quarantined=0)
    case("ecsv_bad_yaml", "13.9", vet(write(
        "ecsv_bad_yaml.ecsv", "# %ECSV 1.0\n# ---\n# datatype: [ {name: id\n" + body)), 2,
        message=["ecsv_bad_yaml.ecsv"])
    case("ecsv_truncated_header", "13.9", vet(write(
        "ecsv_truncated_header.ecsv", "# %ECSV 1.0\n# ---\n")), 2,
        message=["ecsv_truncated_header.ecsv"])
    laughs = ["# %ECSV 1.0", "# ---", "# meta:", "#   a: &a [x, x, x, x, x, x, x, x, x, x]"]
    prev = "a"
    for k in "bcdefghi":
        laughs.append(f"#   {k}: &{k} [" + ", ".join([f"*{prev}"] * 10) + "]")
        prev = k
    text = "\n".join(laughs) + "\n" + ecsv_header(ECSV_COLS).split("# ---\n", 1)[1] + body
    case("ecsv_yaml_alias_bomb", "13.9", vet(write("ecsv_yaml_alias_bomb.ecsv", text)), 0,
         rows_in=2, quarantined=0, note="aliases in unused metadata are not expanded: no blow-up")
    deep = "# %ECSV 1.0\n# ---\n# meta: " + "[" * 5000 + "]" * 5000 + "\n" + \
        ecsv_header(ECSV_COLS).split("# ---\n", 1)[1] + body
    case("ecsv_yaml_deep_nesting", "13.2", vet(write("ecsv_yaml_deep_nesting.ecsv", deep)), 2,
         message=["nested deeper than 256"],
         note="deeply nested unused metadata: refused before the YAML parser, whose time grows "
              "with the square of the depth (40 000 levels took 18 s)")
    flood = "# %ECSV 1.0\n# ---\n# meta: " + "{a: " * 5000 + "}" * 5000 + "\n" + \
        ecsv_header(ECSV_COLS).split("# ---\n", 1)[1] + body
    case("ecsv_yaml_flow_map_nesting", "13.2",
         vet(write("ecsv_yaml_flow_map_nesting.ecsv", flood)), 2,
         message=["nested deeper than 256"])
    case("ecsv_wrong_column_count", "13.9", vet(write(
        "ecsv_wrong_column_count.ecsv", ecsv_header(ECSV_COLS) +
        "id class mass mass_err\nHX-1 brown_dwarf 0.05\nHX-2 brown_dwarf 0.06 0.006\n")), 0,
        rows_in=2, quarantined=1, reasons=["malformed row"])
    case("ecsv_lookalike_ids", "13.9", vet(write(
        "ecsv_lookalike_ids.ecsv", ecsv_header(ECSV_COLS) +
        "id class mass mass_err\nHX-1 brown_dwarf 0.05 0.005\nHX\u200b-1 brown_dwarf 0.06 0.006\n")),
        0, rows_in=2, quarantined=2, reasons=["after Unicode normalisation"])
    # Item 5 for ECSV: one stray quote costs one row; reading resumes at the next line.
    rows = "".join(f"HX-{k} brown_dwarf {0.05 + 0.0001 * k:.4f} 0.005\n" for k in range(1, 301))
    lines = rows.splitlines(keepends=True)
    lines[1] = '"' + lines[1]
    case("ecsv_stray_quote_row2", "13.5", vet(write(
        "ecsv_stray_quote_row2.ecsv", ecsv_header(ECSV_COLS) + "id class mass mass_err\n" +
        "".join(lines))), 0, rows_in=300, quarantined=1, reasons=["unbalanced or stray quote"],
        message=["300 rows in, 299 accepted, 1 quarantined"])
    lines = rows.splitlines(keepends=True)
    lines[4] = lines[4].replace("brown_dwarf", 'brown"dwarf')
    lines[9] = lines[9].replace("HX-10", '"HX-10"x')
    case("ecsv_stray_quote_inside_value", "13.5", vet(write(
        "ecsv_stray_quote_inside_value.ecsv", ecsv_header(ECSV_COLS) + "id class mass mass_err\n" +
        "".join(lines))), 0, rows_in=300, quarantined=2, reasons=["unbalanced or stray quote"])
    bad = (ecsv_header(ECSV_COLS) + "id class mass mass_err\n").encode() + \
        rows.encode().replace(b"HX-3 ", b"HX-\xff3 ", 1)
    case("ecsv_row_not_utf8", "13.9", vet(write("ecsv_row_not_utf8.ecsv", bad)), 0, rows_in=300,
         quarantined=1, reasons=["not valid UTF-8"])


def fits_bytes(ids=("HX-1", "HX-2", "HX-3")):
    t = Table()
    t["id"] = list(ids)
    t["class"] = ["brown_dwarf"] * len(ids)
    t["mass"] = np.linspace(0.05, 0.06, len(ids))
    t["mass"].unit = "solMass"
    t["mass_err"] = np.full(len(ids), 0.005)
    t["mass_err"].unit = "solMass"
    buf = io.BytesIO()
    fits.HDUList([fits.PrimaryHDU(), fits.table_to_hdu(t)]).writeto(buf)
    return buf.getvalue()


def fits_cases():
    good = fits_bytes()
    case("fits_valid", "13.9", vet(write("fits_valid.fits", good)), 0, rows_in=3,
         quarantined=0)
    case("fits_truncated_in_data", "13.9", vet(write("fits_truncated_in_data.fits",
                                                     good[:2880 * 2 + 40])), 2,
         message=["data truncated", "1 complete rows"])
    case("fits_truncated_in_header", "13.9", vet(write("fits_truncated_in_header.fits",
                                                       good[:2880 + 800])), 2,
         message=["truncated file?"])
    case("fits_truncated_after_primary", "13.9",
         vet(write("fits_truncated_after_primary.fits", good[:2880])), 2,
         message=["only the primary HDU"])
    buf = io.BytesIO()
    fits.PrimaryHDU(np.zeros((4, 4))).writeto(buf)
    case("fits_no_binary_table", "13.9", vet(write("fits_no_binary_table.fits", buf.getvalue())),
         2, message=["no binary table"])
    huge = good.replace(b"NAXIS2  =                    3", b"NAXIS2  =      999999999999999")
    case("fits_naxis2_huge", "13.9", vet(write("fits_naxis2_huge.fits", huge)), 2,
         message=["fits_naxis2_huge.fits"])
    neg = good.replace(b"NAXIS2  =                    3", b"NAXIS2  =                   -3")
    case("fits_naxis2_negative", "13.9", vet(write("fits_naxis2_negative.fits", neg)), 2,
         message=["NAXIS2"])
    bad_tform = good.replace(b"TFORM3  = 'D       '", b"TFORM3  = 'Q9Z     '")
    case("fits_bad_tform", "13.9", vet(write("fits_bad_tform.fits", bad_tform)), 2,
         message=["TFORM"])
    case("fits_garbage", "13.9", vet(write("fits_garbage.fits", b"SIMPLE  =" + bytes(5000))), 2,
         message=["fits_garbage.fits"])
    # FITS strings are ASCII: the invisible character is DEL (0x7f), a control character.
    look = fits_bytes(("HX-1", "HXZ-1", "HX-3")).replace(b"HXZ-1", b"HX\x7f-1")
    case("fits_lookalike_ids", "13.9", vet(write("fits_lookalike_ids.fits", look)), 0,
         rows_in=3, quarantined=2, reasons=["after Unicode normalisation"])
    bad = bytearray(good)
    pos = bad.index(b"HX-2")
    bad[pos:pos + 4] = b"H\xc3\x28\xff"
    case("fits_invalid_utf8_id", "13.9", vet(write("fits_invalid_utf8_id.fits", bytes(bad))), 0,
         rows_in=3, note="invalid bytes in a FITS string cell never crash; the row is vetted")


VOT_HEAD = ('<?xml version="1.0" encoding="UTF-8"?>\n'
            '<VOTABLE version="1.4" xmlns="http://www.ivoa.net/xml/VOTable/v1.3">\n')


def vot_table(fields, rows, name="cat"):
    f = "".join(fields)
    r = "".join("<TR>" + "".join(f"<TD>{c}</TD>" for c in row) + "</TR>\n" for row in rows)
    return (VOT_HEAD + f'<RESOURCE><TABLE name="{name}">\n{f}<DATA><TABLEDATA>\n{r}'
            '</TABLEDATA></DATA></TABLE></RESOURCE></VOTABLE>\n')


FIELDS = ['<FIELD name="id" datatype="unicodeChar" arraysize="8"/>',
          '<FIELD name="class" datatype="char" arraysize="*"/>',
          '<FIELD name="mass" datatype="double" unit="solMass"/>',
          '<FIELD name="mass_err" datatype="double" unit="solMass"/>']
VROWS = [("HX-1", "brown_dwarf", "0.05", "0.005"), ("HX-2", "brown_dwarf", "0.06", "0.006")]


def binary_votable(fields, row_bytes):
    stream = base64.b64encode(row_bytes).decode()
    return (VOT_HEAD + '<RESOURCE><TABLE name="cat">\n' + "".join(fields) +
            f'<DATA><BINARY><STREAM encoding="base64">{stream}</STREAM></BINARY></DATA>'
            '</TABLE></RESOURCE></VOTABLE>\n')


def votable_cases():
    case("vot_valid_tabledata", "13.1", vet(write("vot_valid_tabledata.vot",
                                                  vot_table(FIELDS, VROWS))), 0, rows_in=2,
         quarantined=0)
    good = vot_table(FIELDS, VROWS).encode()
    bad = good.replace(b"<TD>HX-2</TD>", b"<TD>HX-\xe2\x82</TD>")
    case("vot_unicodechar_invalid_utf8", "13.1",
         vet(write("vot_unicodechar_invalid_utf8.vot", bad)), 2, message=["not valid UTF-8"])
    bad = good.replace(b"<TD>HX-2</TD>", b"<TD>\xc0</TD>")
    case("vot_unicodechar_lone_lead_byte", "13.1",
         vet(write("vot_unicodechar_lone_lead_byte.vot", bad)), 2, message=["UTF-8"])
    bad = good.replace(b"<TD>brown_dwarf</TD>", b"<TD>brown\xff\xfe</TD>", 1)
    case("vot_char_invalid_utf8", "13.1", vet(write("vot_char_invalid_utf8.vot", bad)), 2,
         message=["UTF-8"])
    bad = good.replace(b"<TD>HX-2</TD>", b"<TD>\xed\xa0\x80</TD>")
    case("vot_utf8_encoded_surrogate", "13.1",
         vet(write("vot_utf8_encoded_surrogate.vot", bad)), 2, message=["UTF-8"])
    cut = [FIELDS[0].replace('arraysize="8"', 'arraysize="3"')] + FIELDS[1:]
    case("vot_unicodechar_cut_non_bmp", "13.1",
         vet(write("vot_unicodechar_non_bmp.vot", vot_table(cut, [("\U0001F600x", "brown_dwarf",
                                                                   "0.05", "0.005")]))), 2,
         message=["Basic Multilingual Plane"])
    chars = ['<FIELD name="id" datatype="char" arraysize="3"/>'] + FIELDS[1:]
    case("vot_char_cut_inside_utf8", "13.1", vet(write(
        "vot_char_cut_inside_utf8.vot", vot_table(chars, [("Бор", "brown_dwarf", "0.05",
                                                           "0.005")]))), 0, rows_in=1,
        note="a fixed char cell cut inside a UTF-8 character is read, never trusted")
    # BINARY: unicodeChar cells are UCS-2; 0xD800 is a lone surrogate.
    ufields = ['<FIELD name="id" datatype="unicodeChar" arraysize="2"/>',
               '<FIELD name="class" datatype="char" arraysize="11"/>',
               '<FIELD name="mass" datatype="double"/>', '<FIELD name="mass_err" datatype="double"/>']
    row = struct.pack(">HH", 0xD800, 0x0041) + b"brown_dwarf" + struct.pack(">dd", 0.05, 0.005)
    case("vot_binary_unicodechar_surrogate", "13.1",
         vet(write("vot_binary_unicodechar_surrogate.vot", binary_votable(ufields, row))), 2,
         message=["data row 1", "`id`", "surrogate"])
    row = struct.pack(">HH", 0x0041, 0x0042) + b"brown\xff\xfe\xc3dwa" + struct.pack(">dd", 0.05,
                                                                                  0.005)
    case("vot_binary_char_invalid_utf8", "13.1",
         vet(write("vot_binary_char_invalid_utf8.vot", binary_votable(ufields, row))), 2,
         message=["data row 1", "`class`", "not valid UTF-8"])
    # BINARY string cells are checked before the VOTable library decodes them: row and column
    # named, whatever row holds the bad bytes.
    def good_row(first):
        return struct.pack(">HH", first, 0x00e9) + b"brown_dwarf" + struct.pack(">dd", 0.05, 0.005)
    bad_row = struct.pack(">HH", 0x0041, 0xdc00) + b"brown_dwarf" + struct.pack(">dd", 0.06, 0.006)
    good = good_row(0x41) + good_row(0x42)
    case("vot_binary_surrogate_row3", "13.1", vet(write(
        "vot_binary_surrogate_row3.vot", binary_votable(ufields, good + bad_row))), 2,
        message=["data row 3", "`id`", "surrogate"])
    case("vot_binary_strings_ok", "13.1", vet(write(
        "vot_binary_strings_ok.vot", binary_votable(ufields, good))), 0, rows_in=2,
        quarantined=0, note="valid UCS-2 (U+00E9) and UTF-8 cells in BINARY are read")
    wide = struct.pack(">HH", 0x20AC, 0x20AC) + b"brown_dwarf" + struct.pack(">dd", 0.05, 0.005)
    case("vot_binary_unicodechar_wide", "13.1", vet(write(
        "vot_binary_unicodechar_wide.vot", binary_votable(ufields, wide))), 2,
        message=["data row 1", "U+07FF"],
        note="two euro signs fill a 2-character unicodeChar cell beyond what votable 0.7 decodes")
    wide_td = [FIELDS[0].replace('arraysize="8"', 'arraysize="2"')] + FIELDS[1:]
    case("vot_tabledata_unicodechar_wide", "13.9", vet(write(
        "vot_tabledata_unicodechar_wide.vot", vot_table(wide_td, [("\u20ac\u20ac", "brown_dwarf",
                                                                  "0.05", "0.005")]))), 2,
        message=["U+07FF", "use datatype char"])
    vfields = ['<FIELD name="id" datatype="char" arraysize="*"/>'] + ufields[1:]
    varrow = struct.pack(">i", 2**31 - 1) + b"HX-1" + b"brown_dwarf" + struct.pack(">dd", 0.05, 0.005)
    case("vot_binary_varlen_count_huge", "13.3", vet(write(
        "vot_binary_varlen_count_huge.vot", binary_votable(vfields, varrow))), 2,
        message=["variable-length", "limit"])
    varrow = struct.pack(">i", -4) + b"HX-1" + b"brown_dwarf" + struct.pack(">dd", 0.05, 0.005)
    case("vot_binary_varlen_count_negative", "13.3", vet(write(
        "vot_binary_varlen_count_negative.vot", binary_votable(vfields, varrow))), 2,
        message=["variable-length", "-4"])
    b2 = binary_votable(vfields, b"\x00" + struct.pack(">i", 4) + b"HX\xc3(" + b"brown_dwarf" +
                        struct.pack(">dd", 0.05, 0.005)).replace("BINARY>", "BINARY2>")
    case("vot_binary2_varlen_invalid_utf8", "13.1", vet(write(
        "vot_binary2_varlen_invalid_utf8.vot", b2)), 2, message=["data row 1", "`id`", "UTF-8"])
    nested = VOT_HEAD + "<RESOURCE>" * 1000 + "</RESOURCE>" * 1000 + "</VOTABLE>\n"
    case("vot_nested_resource_1000", "13.2",
         vet(write("vot_nested_resource_1000.vot", nested)), 2, message=["nested deeper"])
    groups = (VOT_HEAD + '<RESOURCE><TABLE name="cat">' + "<GROUP>" * 5000 + "</GROUP>" * 5000 +
              "".join(FIELDS) + "</TABLE></RESOURCE></VOTABLE>\n")
    case("vot_nested_group_5000", "13.2", vet(write("vot_nested_group_5000.vot", groups)), 2,
         message=["nested deeper"])
    ok_nest = (VOT_HEAD + "<RESOURCE>" * 8 + '<TABLE name="cat">' + "".join(FIELDS) +
               "<DATA><TABLEDATA><TR><TD>HX-1</TD><TD>brown_dwarf</TD><TD>0.05</TD>"
               "<TD>0.005</TD></TR></TABLEDATA></DATA></TABLE>" + "</RESOURCE>" * 8 +
               "</VOTABLE>\n")
    case("vot_nested_resource_8_ok", "13.2", vet(write("vot_nested_resource_8_ok.vot", ok_nest)),
         0, rows_in=1, quarantined=0)
    huge_u = [FIELDS[0].replace('arraysize="8"', 'arraysize="2147483648"')] + FIELDS[1:]
    case("vot_arraysize_huge_unicodechar", "13.3",
         vet(write("vot_arraysize_huge_unicodechar.vot", vot_table(huge_u, VROWS))), 2,
         message=["arraysize", "limit"])
    huge_c = ['<FIELD name="id" datatype="char" arraysize="2147483648"/>'] + FIELDS[1:]
    case("vot_arraysize_huge_char", "13.3",
         vet(write("vot_arraysize_huge_char.vot", vot_table(huge_c, VROWS))), 2,
         message=["arraysize", "limit"])
    over = ['<FIELD name="id" datatype="char" arraysize="100000x100000x100000x100000"/>'] + FIELDS[1:]
    case("vot_arraysize_overflow", "13.3",
         vet(write("vot_arraysize_overflow.vot", vot_table(over, VROWS))), 2,
         message=["arraysize"])
    var = ['<FIELD name="id" datatype="char" arraysize="4294967296*"/>'] + FIELDS[1:]
    case("vot_arraysize_huge_variable", "13.3",
         vet(write("vot_arraysize_huge_variable.vot", vot_table(var, VROWS))), 2,
         message=["arraysize"])
    param = vot_table(FIELDS, VROWS).replace(
        '<TABLE name="cat">', '<TABLE name="cat"><PARAM name="p" datatype="char" '
        'arraysize="2000000000" value="x"/>')
    case("vot_param_arraysize_huge", "13.3", vet(write("vot_param_arraysize_huge.vot", param)),
         2, message=["arraysize"])
    padded = ['<FIELD name="pad" datatype="char" arraysize="1000000"/>'] + FIELDS
    rows = [("", "HX-%d" % k, "brown_dwarf", "0.05", "0.005") for k in range(300)]
    case("vot_padding_bomb", "13.3", vet(write("vot_padding_bomb.vot", vot_table(padded, rows))),
         2, message=["padded"])
    bad = vot_table(FIELDS, [VROWS[0], ("HX-2", "brown_dwarf", "0.0x6", "0.006")])
    case("vot_invalid_digit", "13.9", vet(write("vot_invalid_digit.vot", bad)), 2,
         message=["row 2", "`mass`", "0.0x6"])
    ifields = FIELDS[:2] + ['<FIELD name="mass" datatype="double"/>',
                            '<FIELD name="mass_err" datatype="double"/>',
                            '<FIELD name="n" datatype="short"/>']
    bad = vot_table(ifields, [VROWS[0] + ("7",), VROWS[1] + ("70000",)])
    case("vot_short_overflow", "13.9", vet(write("vot_short_overflow.vot", bad)), 2,
         message=["row 2", "`n`", "70000"])
    whole = vot_table(FIELDS, VROWS)
    case("vot_truncated", "13.9", vet(write("vot_truncated.vot", whole[: len(whole) // 2])), 2,
         message=["ends"])
    case("vot_utf16", "13.9", vet(write("vot_utf16.vot", whole.encode("utf-16"))), 2,
         message=["UTF-16"])
    row = b"".join(struct.pack(">HH", 65, 66) + b"brown_dwarf" + struct.pack(">dd", 0.05, 0.005)
                   for _ in range(3))
    text = binary_votable(ufields, row)
    cut_stream = text.replace(base64.b64encode(row).decode(), base64.b64encode(row).decode()[:-7])
    case("vot_binary_stream_cut", "13.9", vet(write("vot_binary_stream_cut.vot", cut_stream)), 2,
         message=["STREAM"])
    short = binary_votable(ufields, row[:-8])
    case("vot_binary_short_row", "13.9", vet(write("vot_binary_short_row.vot", short)), 2,
         message=["row 3", "truncated"])
    case("vot_lookalike_ids", "13.9", vet(write(
        "vot_lookalike_ids.vot", vot_table(FIELDS, [VROWS[0], ("HX-1&#x200B;", "brown_dwarf",
                                                              "0.06", "0.006")]))), 0,
        rows_in=2, quarantined=2, reasons=["after Unicode normalisation"])
    # astropy writes string columns as unicodeChar in BINARY2: the path of issue 13 item 1.
    t = Table()
    t["id"] = ["HX-1", "Ĥx-2"]
    t["class"] = ["brown_dwarf", "brown_dwarf"]
    t["mass"] = [0.05, 0.06]
    t["mass_err"] = [0.005, 0.006]
    vt = from_table(t)
    vt.get_first_table().format = "binary2"
    buf = io.BytesIO()
    vt.to_xml(buf)
    data = buf.getvalue()
    case("vot_astropy_binary2_strings", "13.1",
         vet(write("vot_astropy_binary2_strings.vot", data)), 0, rows_in=2, quarantined=0)
    case("vot_no_table", "13.9", vet(write("vot_no_table.vot",
                                           VOT_HEAD + "<RESOURCE></RESOURCE></VOTABLE>\n")),
         2, message=["no TABLE"])
    case("vot_empty_resource_tag", "13.9", vet(write("vot_empty_resource_tag.vot",
                                                     VOT_HEAD + "<RESOURCE/></VOTABLE>\n")),
         2, message=["schema does not allow"])
    case("vot_not_xml", "13.9", vet(write("vot_not_xml.vot", "id,class\nA,B\n")), 2,
         message=["vot_not_xml.vot"])


def parquet_cases():
    base = {"id": pa.array(["HX-1", "HX-2"]), "class": pa.array(["brown_dwarf"] * 2),
            "mass": pa.array([0.05, 0.06]), "mass_err": pa.array([0.005, 0.006])}
    def pqbytes(table):
        buf = io.BytesIO()
        pq.write_table(table, buf)
        return buf.getvalue()
    good = pqbytes(pa.table(base))
    case("pq_valid", "13.6", vet(write("pq_valid.parquet", good)), 0, rows_in=2, quarantined=0)
    extra = {
        "timestamp": pa.array([datetime.datetime(2020, 1, 1)] * 2, pa.timestamp("us")),
        "date": pa.array([datetime.date(2020, 1, 1)] * 2, pa.date32()),
        "duration": pa.array([1, 2], pa.duration("s")),
        "struct": pa.array([{"x": 1}, {"x": 2}]),
        "list": pa.array([[1, 2], [3]]),
        "decimal": pa.array([decimal.Decimal("1.50")] * 2, pa.decimal128(5, 2)),
        "float16": pa.array(np.array([1.0, 2.0], dtype=np.float16), pa.float16()),
        "map": pa.array([[("k", 1)], [("j", 2)]], pa.map_(pa.string(), pa.int64())),
    }
    for k, v in extra.items():
        case(f"pq_unused_{k}_column", "13.6",
             vet(write(f"pq_unused_{k}_column.parquet", pqbytes(pa.table({**base, "x_" + k: v})))),
             0, rows_in=2, quarantined=0)
    used = dict(base)
    used["mass_err"] = pa.array([{"x": 1}, {"x": 2}])
    case("pq_used_struct_column", "13.6", vet(write("pq_used_struct_column.parquet",
                                                   pqbytes(pa.table(used)))), 2,
         message=["`mass_err`", "container"],
         note="a used column of a container type is refused, naming the column")
    used = dict(base)
    used["mass"] = pa.array(np.array([0.05, 0.06], dtype=np.float16), pa.float16())
    case("pq_used_float16_column", "13.6", vet(write("pq_used_float16_column.parquet",
                                                    pqbytes(pa.table(used)))), 2,
         message=["pq_used_float16_column.parquet"])
    case("pq_truncated", "13.6", vet(write("pq_truncated.parquet", good[: len(good) // 2])), 2,
         message=["pq_truncated.parquet"])
    case("pq_garbage_with_magic", "13.6",
         vet(write("pq_garbage_with_magic.parquet", b"PAR1" + bytes(range(256)) * 8 + b"PAR1")),
         2, message=["pq_garbage_with_magic.parquet"])
    bad = bytearray(good)
    for i in range(20, len(bad) // 2, 7):
        bad[i] ^= 0x5A
    case("pq_corrupt_pages", "13.6", vet(write("pq_corrupt_pages.parquet", bytes(bad))), 2,
         message=["pq_corrupt_pages.parquet"])
    footer_len = struct.unpack("<I", good[-8:-4])[0]
    bad = bytearray(good)
    bad[-8:-4] = struct.pack("<I", footer_len * 1000)
    case("pq_footer_length_wrong", "13.6", vet(write("pq_footer_length_wrong.parquet",
                                                    bytes(bad))), 2,
         message=["pq_footer_length_wrong.parquet"])


def window_cases():
    # Item 7: a population window narrower than the grid's MMHB range is a user error (exit 2),
    # not a bug (exit 1).
    cat = write("window_catalogue.csv", csv_text())
    case("population_window_narrower_than_grid", "13.7",
         ["confront", cat, "--upsilon", "-0.3:0.6:4", "--tau", "0",
          "--population-window", "0.074:0.076", "--out", "{out}"], 2,
         message=["population window", "MMHB"])


def config_cases():
    def cfg(name, text):
        return write(name, text)
    cat = "tests/hostile/files/map_base.csv"
    case("cfg_unknown_key", "13.9", ["run", cfg("cfg_unknown_key.toml",
                                                 'output = "out"\nouptut = "x"\n')], 2,
         message=["ouptut"])
    case("cfg_bad_grid", "13.9", ["run", cfg("cfg_bad_grid.toml",
                                              'output = "out"\n[[catalogue]]\npath = "map_base.csv"\n'
                                              '[grid]\nupsilon = "1:0:abc"\ntau = "0"\n')], 2,
         message=["upsilon"])
    case("cfg_grid_missing_tau", "13.9", ["run", cfg("cfg_grid_missing_tau.toml",
                                                      'output = "out"\n[[catalogue]]\n'
                                                      'path = "map_base.csv"\n[grid]\n'
                                                      'upsilon = "0"\n')], 2, message=["tau"])
    case("cfg_missing_catalogue", "13.9", ["run", cfg("cfg_missing_catalogue.toml",
                                                       'output = "out"\n[[catalogue]]\n'
                                                       'path = "no_such_file.csv"\n[grid]\n'
                                                       'upsilon = "0"\ntau = "0"\n')], 2,
         message=["no_such_file.csv"])
    case("cfg_binary_garbage", "13.9", ["run", cfg("cfg_binary_garbage.toml",
                                                    bytes(range(256)))], 2,
         message=["cfg_binary_garbage.toml"])
    del cat


def manifest():
    lines = ["# Hostile-input corpus: one entry per file, written by tools/make_hostile_corpus.py.",
             "# Run by tests/hostile_corpus.rs: each command within 10 s, never exit 1 or 134,",
             "# never a panic or backtrace, and the outcome below. `{out}` is a fresh folder.",
             "# item: the issue-13 item the entry covers. Paths are relative to the repository.",
             ""]
    def q(s):
        return '"' + s.replace("\\", "\\\\").replace('"', '\\"') + '"'
    for c in CASES:
        lines.append("[[case]]")
        lines.append(f"name = {q(c['name'])}")
        lines.append(f"item = {q(c['item'])}")
        lines.append("args = [" + ", ".join(q(a) for a in c["args"]) + "]")
        lines.append(f"exit = {c['exit']}")
        if c["rows_in"] is not None:
            lines.append(f"rows_in = {c['rows_in']}")
        if c["quarantined"] is not None:
            lines.append(f"quarantined = {c['quarantined']}")
        if c["reasons"]:
            lines.append("reasons = [" + ", ".join(q(r) for r in c["reasons"]) + "]")
        if c["message"]:
            lines.append("message = [" + ", ".join(q(m) for m in c["message"]) + "]")
        if c["note"]:
            lines.append(f"note = {q(c['note'])}")
        lines.append("")
    with open(os.path.join(OUT, "manifest.toml"), "w", encoding="utf-8") as f:
        f.write("\n".join(lines))


def main():
    shutil.rmtree(FILES, ignore_errors=True)
    os.makedirs(FILES)
    csv_cases()
    map_cases()
    ecsv_cases()
    fits_cases()
    votable_cases()
    parquet_cases()
    window_cases()
    config_cases()
    names = [c["name"] for c in CASES]
    assert len(names) == len(set(names)), "duplicate case names"
    manifest()
    print(f"{len(CASES)} cases written to {OUT}")


if __name__ == "__main__":
    main()

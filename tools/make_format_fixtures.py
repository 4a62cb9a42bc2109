#!/usr/bin/env python3
"""Write the format fixtures of tests/fixtures/formats/ with astropy, the outside reference.

One small invented catalogue (fictional scenario, not measurements) is written by astropy as
FITS, VOTable (TABLEDATA and BINARY2), ECSV and CSV; a second table covers the column types
(booleans, integers of every width, unsigned and scaled FITS integers, floats, strings, nulls).
Broken variants for the error tests go to tests/fixtures/formats/broken/.

`expected.json` records, per file, the column names, the unit strings as astropy wrote them and
every cell as a reader must return it:
  null      missing (masked value, empty string, FITS TNULL, NaN in FITS/VOTable floats),
  number    the stored value (float32 columns as the exact float32 value widened to double),
  string    text; "NaN" in a float column of an ECSV file means a NaN number (ECSV has no
            NaN-as-null rule), integers beyond 2**53 are decimal strings (exact, not rounded),
  true/false  booleans.
Every expectation is checked here against astropy's own reading of the file it wrote, with the
null rules above applied (astropy keeps NaN as a value; FITS Standard 4.0 section 7.3.3.1 and
VOTable 1.4 section 6.1 define NaN as the null of a float column).

Run from the repository root:  python3 tools/make_format_fixtures.py
Needs astropy 8.0.2 from PyPI (pip install astropy==8.0.2); another version may write
different bytes and then the committed fixtures and this script disagree.
"""

import json
import math
import os
import sys
import xml.etree.ElementTree as ET

import numpy as np
import astropy
import astropy.units as u
from astropy.io import fits
from astropy.io.votable import from_table, parse as vo_parse
from astropy.table import MaskedColumn, Table

ASTROPY_VERSION = "8.0.2"
OUT = os.path.join("tests", "fixtures", "formats")
BROKEN = os.path.join(OUT, "broken")
STAMP = (
    f"Written by tools/make_format_fixtures.py with astropy {ASTROPY_VERSION}. "
    "Invented demonstration data in a fictional scenario; not measurements."
)


def catalogue():
    """The invented catalogue: masses in Jupiter masses, radii in km, ages in Gyr, a few nulls."""
    t = Table()
    t.meta["comments"] = [STAMP]
    t["id"] = [f"FX-{i:02d}" for i in range(1, 13)]
    t["class"] = [
        "brown_dwarf", "brown_dwarf", "hburning", "hburning", "white_dwarf", "brown_dwarf",
        "hburning", "white_dwarf", "brown_dwarf", "hburning", "brown_dwarf", "white_dwarf",
    ]
    mass = [52.3, 68.1, 84.5, 97.2, 628.0, 71.4, 112.9, 586.5, 33.8, 79.6, 74.9, 702.3]
    lo = [3.1, 4.0, 2.2, 3.5, 21.0, 2.9, 4.4, 18.3, 1.7, 2.6, 3.3, 25.1]
    hi = [3.4, 4.6, 2.5, 3.1, 20.0, 3.2, 4.1, 19.5, 2.0, 2.8, 3.1, 24.0]
    radius = [71500.0, 69000.0, 88000.0, 95200.0, 8900.0, 70100.0, 112000.0, 9600.0,
              74800.0, 80100.0, 68900.0, 7800.0]
    age = [1.2, 4.5, 3.0, 7.1, 2.2, 0.8, 5.5, 9.0, 0.4, 6.3, 10.2, 1.5]
    t["mass"] = MaskedColumn(mass, unit=u.M_jup)
    t["mass_err_lo"] = MaskedColumn(lo, unit=u.M_jup)
    t["mass_err_hi"] = MaskedColumn(hi, unit=u.M_jup, mask=[i == 6 for i in range(12)])
    t["radius"] = MaskedColumn(radius, unit=u.km, mask=[i in (3, 9) for i in range(12)])
    t["age"] = MaskedColumn(age, unit=u.Gyr, mask=[i == 10 for i in range(12)])
    return t


UCDS = {"id": "meta.id;meta.main", "class": "src.class", "mass": "phys.mass",
        "mass_err_lo": "stat.error;phys.mass", "mass_err_hi": "stat.error;phys.mass",
        "radius": "phys.size.radius", "age": "time.age"}


def types_table():
    """Every column type the readers share across formats, with nulls and edge values."""
    t = Table()
    t.meta["comments"] = [STAMP]
    t["flag"] = [True, False, True, False]
    t["u8"] = MaskedColumn(np.array([0, 7, 255, 1], dtype=np.uint8), mask=[0, 1, 0, 0])
    t["i16"] = MaskedColumn(np.array([-32768, 1, 0, 32767], dtype=np.int16), mask=[0, 0, 1, 0])
    t["i32"] = MaskedColumn(np.array([-2147483648, 42, 2147483647, 0], dtype=np.int32),
                            mask=[0, 0, 0, 1])
    # 2**62 + 1 is not a double: a reader must keep it exact (as decimal text).
    t["i64"] = MaskedColumn(np.array([2**62 + 1, -5, 0, 9007199254740993], dtype=np.int64),
                            mask=[0, 0, 1, 0])
    t["f32"] = MaskedColumn(np.array([0.1, np.nan, 3.0, -1.5e-30], dtype=np.float32),
                            mask=[0, 0, 1, 0], unit=u.km)
    t["f64"] = MaskedColumn(np.array([0.1, -2.5e300, np.nan, 1.0 / 3.0]), mask=[0, 1, 0, 0],
                            unit=u.Gyr)
    # Masked strings hold "" underneath so every writer stores the same bytes.
    t["name"] = MaskedColumn(["alpha", "", "", "with space"], mask=[0, 0, 1, 0])
    return t


def unsigned_scaled_hdu():
    """FITS-only columns: unsigned integers (TZERO offsets), TSCAL/TZERO scaling with TNULL."""
    cols = [
        fits.Column(name="u16", format="I", bzero=32768, array=np.array([0, 1, 65535], dtype=np.uint16)),
        fits.Column(name="u32", format="J", bzero=2147483648,
                    array=np.array([0, 1, 4294967295], dtype=np.uint32)),
        fits.Column(name="u64", format="K", bzero=9223372036854775808,
                    array=np.array([0, 1, 18446744073709551615], dtype=np.uint64)),
        # Stored integers; TSCAL4 = 0.5 and TZERO4 = 100 are patched in after writing (astropy
        # 8.0.2 fails to scale float data back into an int16 column), so physical = 100 + 0.5 *
        # stored; stored -1 is the null (TNULL4).
        fits.Column(name="scaled", format="I", null=-1, unit="K",
                    array=np.array([0, 3, -1], dtype=np.int16)),
        fits.Column(name="sb", format="B", bzero=-128, array=np.array([-128, 0, 127], dtype=np.int8)),
    ]
    hdu = fits.BinTableHDU.from_columns(cols, name="UNSIGNED_SCALED")
    hdu.header["COMMENT"] = STAMP
    hdu.header["COMMENT"] = "PLACEHOLDER-TSCAL4"
    hdu.header["COMMENT"] = "PLACEHOLDER-TZERO4"
    return hdu


def card(key, value):
    """One 80-character FITS header card with a fixed-format numeric value."""
    return f"{key:<8}= {value:>20}".ljust(80).encode("ascii")


def patch_scaling(path):
    data = bytearray(open(path, "rb").read())
    for key, value in (("TSCAL4", "0.5"), ("TZERO4", "100.0")):
        marker = f"COMMENT PLACEHOLDER-{key}".encode("ascii")
        at = bytes(data).find(marker)
        assert at >= 0 and at % 80 == 0
        data[at:at + 80] = card(key, value)
    with open(path, "wb") as f:
        f.write(bytes(data))


def cell_value(col, i, fmt):
    """The expected cell of column `col` row `i` for a file of format `fmt`."""
    masked = bool(np.ma.getmaskarray(col)[i])
    if masked:
        return None
    v = col[i]
    kind = col.dtype.kind
    if kind == "b":
        return bool(v)
    if kind in "iu":
        iv = int(v)
        return iv if abs(iv) <= 2**53 else str(iv)
    if kind == "f":
        fv = float(v)
        if math.isnan(fv):
            return "NaN" if fmt == "ecsv" else None
        return fv
    s = str(v)
    return s if s != "" else None


def expectation(t, fmt, units, ucds=None, table=None):
    ucds = ucds or {}
    return {
        "table": table,
        "columns": [{"name": n, "unit": units.get(n), "ucd": ucds.get(n)} for n in t.colnames],
        "rows": [[cell_value(t[n], i, fmt) for n in t.colnames] for i in range(len(t))],
    }


def same(expected, got):
    if expected is None or got is None:
        return expected is got
    if isinstance(expected, float) and isinstance(got, float):
        return expected == got
    return expected == got


def check_against_astropy(path, exp, fmt, table_index=0, hdu=None, astropy_reads=None):
    """Reads `path` back with astropy and asserts it agrees with the expectation.

    `astropy_reads` maps (column, 1-based row) to what astropy returns where it departs from
    the standard on purpose-stated grounds; those cells are checked against that value instead.
    """
    astropy_reads = astropy_reads or {}
    if fmt == "fits":
        back = Table.read(path, hdu=hdu)
    elif fmt == "votable":
        back = Table.read(path, format="votable", table_id=table_index)
    else:
        back = Table.read(path, format="ascii.ecsv")
    assert back.colnames == [c["name"] for c in exp["columns"]], (path, back.colnames)
    for j, name in enumerate(back.colnames):
        col = back[name]
        for i, row in enumerate(exp["rows"]):
            got = None if bool(np.ma.getmaskarray(col)[i]) else col[i]
            if got is not None:
                kind = col.dtype.kind
                if kind == "b":
                    got = bool(got)
                elif kind in "iu":
                    got = int(got)
                    got = got if abs(got) <= 2**53 else str(got)
                elif kind == "f":
                    got = float(got)
                    if math.isnan(got):
                        got = "NaN" if fmt == "ecsv" else None
                else:
                    got = str(got)
                    got = None if got == "" else got
            if (name, i + 1) in astropy_reads:
                assert same(astropy_reads[(name, i + 1)], got), (path, name, i + 1, got)
                continue
            assert same(row[j], got), f"{path}: {name} row {i + 1}: expected {row[j]!r}, astropy read {got!r}"


def fits_units(path, hdu):
    h = fits.getheader(path, hdu)
    return {h[f"TTYPE{k}"]: h[f"TUNIT{k}"] for k in range(1, h["TFIELDS"] + 1) if f"TUNIT{k}" in h}


def vot_units(path, table_index=0):
    """Unit and ucd attributes exactly as written (astropy's parser would normalise them)."""
    ns = {"v": "http://www.ivoa.net/xml/VOTable/v1.3"}
    tables = ET.parse(path).getroot().findall(".//v:TABLE", ns)
    fields = tables[table_index].findall("v:FIELD", ns)
    units = {f.get("name"): f.get("unit") for f in fields if f.get("unit") is not None}
    ucds = {f.get("name"): f.get("ucd") for f in fields if f.get("ucd") is not None}
    return units, ucds


def ecsv_units(t):
    return {n: t[n].unit.to_string() for n in t.colnames if t[n].unit is not None}


def write_votable(t, path, serialization, name, ucds=None, extra=None, nulls=None):
    vot = from_table(t)
    table = vot.get_first_table()
    table.name = name
    table.description = STAMP
    for field in table.fields:
        if ucds and field.name in ucds:
            field.ucd = ucds[field.name]
        if nulls and field.name in nulls:
            # BINARY (version 1) has no null flags: integers need a VALUES null.
            field.values.null = nulls[field.name]
    if extra is not None:
        second = from_table(extra).get_first_table()
        second.name = "second"
        vot.resources[0].tables.append(second)
    for tab in vot.iter_tables():
        tab.format = serialization
    vot.to_xml(path)


def main():
    if astropy.__version__ != ASTROPY_VERSION:
        sys.exit(f"astropy {astropy.__version__} found; these fixtures are made with {ASTROPY_VERSION}")
    os.makedirs(BROKEN, exist_ok=True)
    expected = {"astropy_version": ASTROPY_VERSION, "files": {}}

    # ---- the catalogue, five ways ----
    cat = catalogue()

    # FITS cannot express Jupiter masses (astropy refuses: "not able to represent scales that
    # are not powers of 10"), so the FITS file stores the masses converted to kg, as astropy advises.
    cat_fits = cat.copy()
    for n in ("mass", "mass_err_lo", "mass_err_hi"):
        # MaskedColumn.to() drops the mask; keep it.
        cat_fits[n] = MaskedColumn(cat[n].to(u.kg).value, unit=u.kg, mask=cat[n].mask)
    hdu = fits.table_to_hdu(cat_fits)
    hdu.name = "CATALOGUE"
    p = os.path.join(OUT, "catalogue.fits")
    fits.HDUList([fits.PrimaryHDU(), hdu]).writeto(p, overwrite=True)
    exp = expectation(cat_fits, "fits", fits_units(p, 1), table=None)
    check_against_astropy(p, exp, "fits", hdu=1)
    expected["files"]["catalogue.fits"] = exp

    for ser, fname in (("tabledata", "catalogue_tabledata.vot"), ("binary2", "catalogue_binary2.vot")):
        p = os.path.join(OUT, fname)
        write_votable(cat, p, ser, "catalogue", UCDS)
        units, ucds = vot_units(p)
        exp = expectation(cat, "votable", units, ucds)
        check_against_astropy(p, exp, "votable")
        expected["files"][fname] = exp

    p = os.path.join(OUT, "catalogue.ecsv")
    cat.write(p, format="ascii.ecsv", overwrite=True)
    exp = expectation(cat, "ecsv", ecsv_units(cat))
    check_against_astropy(p, exp, "ecsv")
    expected["files"]["catalogue.ecsv"] = exp

    # CSV: units as a `[unit]` suffix of the header name, spelled as astropy spells them in
    # ECSV (`jupiterMass`; astropy's "vounit" format would write the scaled `1.8981246e+27kg`).
    csv_t = cat.copy()
    for n in csv_t.colnames:
        if csv_t[n].unit is not None:
            csv_t.rename_column(n, f"{n}[{csv_t[n].unit.to_string()}]")
    csv_t.meta["comments"] = [STAMP]
    csv_t.write(os.path.join(OUT, "catalogue.csv"), format="ascii.csv", overwrite=True,
                comment="# ")

    # ---- the column types ----
    ty = types_table()
    p = os.path.join(OUT, "types.fits")
    hdu = fits.table_to_hdu(ty)
    hdu.name = "TYPES"
    us = unsigned_scaled_hdu()
    fits.HDUList([fits.PrimaryHDU(), hdu, us]).writeto(p, overwrite=True)
    patch_scaling(p)
    exp = expectation(ty, "fits", fits_units(p, 1), table="TYPES")
    check_against_astropy(p, exp, "fits", hdu=1)
    expected["files"]["types.fits"] = exp
    back = Table.read(p, hdu=2)
    us_t = Table()
    us_t["u16"] = [0, 1, 65535]
    us_t["u32"] = [0, 1, 4294967295]
    us_t["u64"] = np.array([0, 1, 18446744073709551615], dtype=np.uint64)
    us_t["scaled"] = MaskedColumn([100.0, 101.5, 0.0], mask=[0, 0, 1])
    us_t["sb"] = [-128, 0, 127]
    exp = expectation(us_t, "fits", fits_units(p, 2), table="2")
    # astropy 8.0.2 does not apply TNULL to a scaled column (it returns 100 + 0.5 * -1); FITS
    # Standard 4.0 section 7.3.2 compares TNULL with the stored integer, so the cell is null.
    check_against_astropy(p, exp, "fits", hdu=2, astropy_reads={("scaled", 3): 99.5})
    assert list(back["scaled"]) [:2] == [100.0, 101.5]
    expected["files"]["types.fits#2"] = exp

    extra = Table({"k": [1, 2]})
    for ser, fname in (("tabledata", "types_tabledata.vot"), ("binary2", "types_binary2.vot"),
                       ("binary", "types_binary.vot")):
        p = os.path.join(OUT, fname)
        write_votable(ty, p, ser, "types", extra=extra,
                      nulls={"u8": 99, "i16": -999, "i32": -999, "i64": -999})
        units, ucds = vot_units(p)
        exp = expectation(ty, "votable", units, ucds, table="types")
        check_against_astropy(p, exp, "votable")
        expected["files"][fname] = exp
        exp2 = expectation(extra, "votable", {}, table="second")
        check_against_astropy(p, exp2, "votable", table_index=1)
        expected["files"][fname + "#second"] = exp2

    for delim, fname in ((" ", "types.ecsv"), (",", "types_comma.ecsv")):
        p = os.path.join(OUT, fname)
        ty.write(p, format="ascii.ecsv", delimiter=delim, overwrite=True)
        exp = expectation(ty, "ecsv", ecsv_units(ty))
        check_against_astropy(p, exp, "ecsv")
        expected["files"][fname] = exp

    # ---- broken variants ----
    good_fits = open(os.path.join(OUT, "catalogue.fits"), "rb").read()
    with open(os.path.join(BROKEN, "truncated.fits"), "wb") as f:
        f.write(good_fits[: 2880 * 2 + 100])  # header complete, data cut inside the first row
    bad = bytearray(good_fits)
    card = bytes(bad).find(b"NAXIS2  =")
    bad[card:card + 80] = b"NAXIS2  = 'twelve'".ljust(80)
    with open(os.path.join(BROKEN, "bad_card.fits"), "wb") as f:
        f.write(bytes(bad))
    vot = open(os.path.join(OUT, "catalogue_tabledata.vot"), encoding="utf-8").read()
    with open(os.path.join(BROKEN, "malformed.vot"), "w", encoding="utf-8") as f:
        f.write(vot.replace("</TR>", "</TD>", 1))
    ecsv = open(os.path.join(OUT, "catalogue.ecsv"), encoding="utf-8").read()
    with open(os.path.join(BROKEN, "wrong_header.ecsv"), "w", encoding="utf-8") as f:
        f.write(ecsv.replace("\nid class mass", "\nid kind mass", 1))
    with open(os.path.join(BROKEN, "unknown_unit.ecsv"), "w", encoding="utf-8") as f:
        f.write(ecsv.replace("unit: km", "unit: furlong", 1))

    with open(os.path.join(OUT, "expected.json"), "w", encoding="utf-8") as f:
        json.dump(expected, f, indent=1, sort_keys=True)
        f.write("\n")
    print(f"wrote fixtures into {OUT} with astropy {astropy.__version__}")


if __name__ == "__main__":
    main()

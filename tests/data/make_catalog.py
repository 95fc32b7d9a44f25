"""Build targets/globular_clusters.ecsv from published tables copied to text files.

Usage: python tests/data/make_catalog.py [SOURCES_DIR [OUT.ecsv]]

Inputs (in SOURCES_DIR, default tests/data/catalog_sources/):

* harris2010_part1.txt, _part2.txt, _part3.txt -- the data rows of Parts I, II
  and III of Harris 1996 (2010 edition), mwgc.dat, verbatim.
* xrbgc_extract.csv (optional, not shipped) -- ID, [Fe/H], E(B-V), V_t, r_h of a second public copy of
  the catalogue (OddThumb/xrbgc, HarrisCAT/Harris_CAT.csv), for comparison only.
* lvdb_gc_harris_extract.csv -- columns key, ra, dec, distance_modulus(+errors),
  ref_distance and spectroscopic [Fe/H] (+ref) of data/gc_harris.csv of the
  Local Volume Database (Pace 2024), which quotes the Baumgardt & Vasiliev
  2021 distance moduli.

The copy is checked against itself before anything is written:
Galactic l, b recomputed from RA, Dec must match Harris's columns; M_V,t must
equal V_t - (m-M)_V; (m-M)_V - 3.1 E(B-V) must match R_Sun; r_h >= r_c; every
LVDB row must sit within an arcminute of a Harris position; the [Fe/H] values
LVDB credits to Harris must equal ours.
"""

from __future__ import annotations

import csv
import math
import sys
from pathlib import Path

import numpy as np
from astropy import units as u
from astropy.coordinates import SkyCoord
from astropy.table import MaskedColumn, Table

_REPO = Path(__file__).resolve().parents[2]
HERE = Path(sys.argv[1]) if len(sys.argv) > 1 else Path(__file__).resolve().parent / "catalog_sources"
OUT = Path(sys.argv[2]) if len(sys.argv) > 2 else _REPO / "targets" / "globular_clusters.ecsv"


def fnum(text: str) -> float | None:
    text = text.strip()
    return float(text) if text else None


def read_part1(path: Path) -> list[dict]:
    rows = []
    for line in path.read_text().splitlines():
        ident = line[:12].strip()
        other = line[12:25].strip()
        ra_txt = line[25:37].split()
        dec_txt = line[37:50].split()
        rest = line[50:].split()
        rows.append(
            dict(
                id=ident,
                other=other,
                ra_hms=":".join(ra_txt),
                dec_dms=":".join(dec_txt),
                l_deg=float(rest[0]),
                b_deg=float(rest[1]),
                r_sun_kpc=float(rest[2]),
            )
        )
    return rows


def read_part2(path: Path) -> dict[str, dict]:
    rows = {}
    for line in path.read_text().splitlines():
        ident = line[:12].strip()
        tok = line[12:].split()
        if "." not in tok[0]:  # no [Fe/H]: the first token is the weight 0
            tok.insert(0, "")
        rows[ident] = dict(
            feh=fnum(tok[0]),
            ebv=float(tok[2]),
            v_hb=float(tok[3]),
            dm_v=float(tok[4]),
            v_t=float(tok[5]) if len(tok) > 5 else None,
            mv_t=float(tok[6]) if len(tok) > 6 else None,
            # Integrated colours by fixed columns (a blank colour would shift the tokens).
            ub=fnum(line.ljust(80)[54:60]), bv=fnum(line.ljust(80)[60:66]),
            vr=fnum(line.ljust(80)[66:72]), vi=fnum(line.ljust(80)[72:78]),
        )
    return rows


def read_part3(path: Path) -> dict[str, dict]:
    rows = {}
    for line in path.read_text().splitlines():
        line = line.ljust(100)
        ident = line[:12].strip()
        rows[ident] = dict(c=fnum(line[47:54]), collapsed=line[54:58].strip(), r_c=fnum(line[58:64]),
                           r_h=fnum(line[64:70]), mu_v=fnum(line[70:78]))
    return rows


def read_lvdb(path: Path) -> list[dict]:
    with path.open() as fh:
        return list(csv.DictReader(fh))


def check(condition: bool, message: str, failures: list[str]) -> None:
    if not condition:
        failures.append(message)


def main() -> None:
    part1 = read_part1(HERE / "harris2010_part1.txt")
    part2 = read_part2(HERE / "harris2010_part2.txt")
    part3 = read_part3(HERE / "harris2010_part3.txt")
    lvdb = read_lvdb(HERE / "lvdb_gc_harris_extract.csv")
    ids = [r["id"] for r in part1]
    assert len(ids) == len(set(ids)) == 157, len(ids)
    assert set(ids) == set(part2) == set(part3), set(ids) ^ set(part2) ^ set(part3)

    failures: list[str] = []
    coords = SkyCoord(
        [r["ra_hms"] for r in part1],
        [r["dec_dms"] for r in part1],
        unit=(u.hourangle, u.deg),
        frame="fk5",
        equinox="J2000",
    )
    gal = coords.galactic
    lb_off = {}
    for r, g in zip(part1, gal):
        dl = ((g.l.deg - r["l_deg"] + 180) % 360 - 180) * math.cos(math.radians(r["b_deg"]))
        db = g.b.deg - r["b_deg"]
        # Harris gives l, b to 0.01 deg; allow rounding plus a little.
        if not (abs(dl) < 0.012 and abs(db) < 0.012):
            lb_off[r["id"]] = (dl, db)
    for r in part1:
        p2 = part2[r["id"]]
        if p2["v_t"] is not None:
            check(abs(p2["v_t"] - p2["dm_v"] - p2["mv_t"]) < 0.011, f"{r['id']}: M_V,t", failures)
        dm0 = p2["dm_v"] - 3.1 * p2["ebv"]
        dm_r = 5 * math.log10(r["r_sun_kpc"] * 100)
        tol = 5 / math.log(10) * 0.05 / r["r_sun_kpc"] + 0.03
        check(abs(dm0 - dm_r) < tol, f"{r['id']}: (m-M)V-3.1E {dm0:.2f} vs R_sun {dm_r:.2f}", failures)
        p3 = part3[r["id"]]
        # Only concentrated clusters: for King c < 0.7 the core radius can exceed r_h.
        if p3["r_c"] is not None and p3["r_h"] is not None and p3["c"] >= 0.7:
            check(p3["r_h"] >= p3["r_c"], f"{r['id']}: r_h {p3['r_h']} < r_c {p3['r_c']}", failures)

    lv_coords = SkyCoord([float(x["ra"]) for x in lvdb], [float(x["dec"]) for x in lvdb], unit="deg")
    icrs = coords.icrs
    idx, sep, _ = lv_coords.match_to_catalog_sky(icrs)
    lv_by_id: dict[str, dict] = {}
    lv_sep: dict[str, float] = {}
    for row, i, s in zip(lvdb, idx, sep):
        # 10 arcmin only to pair the rows; large offsets are dealt with below.
        check(s.arcmin < 10.0, f"LVDB {row['key']}: nearest Harris {ids[i]} at {s.arcmin:.2f}'", failures)
        check(ids[i] not in lv_by_id, f"LVDB {row['key']}: {ids[i]} matched twice", failures)
        lv_by_id[ids[i]] = row
        lv_sep[ids[i]] = s.arcsec
        if row["ref_metallicity_spectroscopic"].startswith("Harris1996") and row["metallicity_spectroscopic"]:
            ours = part2[ids[i]]["feh"]
            if ours is None or abs(ours - float(row["metallicity_spectroscopic"])) > 0.005:
                print(f"note: [Fe/H] {ids[i]} Harris {ours} vs LVDB-quoted {row['metallicity_spectroscopic']}")
    # A position is confirmed if it reproduces Harris's own l, b, or if an
    # independent modern position (LVDB) lies within 10 arcsec of it.
    for ident, (dl, db) in lb_off.items():
        ok = lv_sep.get(ident, 1e9) < 10.0
        print(f"note: {ident}: Harris l,b differ by {dl:.3f},{db:.3f} deg from RA,Dec; LVDB sep "
              f"{lv_sep.get(ident, float('nan')):.1f}\" -> {'confirmed' if ok else 'UNCONFIRMED'}")
        check(ok, f"{ident}: position unconfirmed", failures)
    # A second public copy of the catalogue (OddThumb/xrbgc, HarrisCAT/Harris_CAT.csv).
    second_copy_diffs = {}
    second_copy = HERE / "xrbgc_extract.csv"  # optional: not shipped, used when it was built
    with (second_copy.open() if second_copy.exists() else open(__import__("os").devnull)) as fh:
        for row in csv.DictReader(fh):
            ours = {"feh": part2[row["ID"]]["feh"], "ebv": part2[row["ID"]]["ebv"],
                    "vt": part2[row["ID"]]["v_t"], "rh": part3[row["ID"]]["r_h"]}
            for key, value in ours.items():
                theirs = None if row[key] == "-" else float(row[key])
                if (theirs is None) != (value is None) or (value is not None and abs(theirs - value) > 1e-9):
                    second_copy_diffs[(row["ID"], key)] = theirs
    print(f"second copy differs in {sorted(second_copy_diffs)}")
    check(set(second_copy_diffs) <= {("Lynga 7", "feh")}, f"second copy: {second_copy_diffs}", failures)
    print(f"LVDB position match: median {np.median(sep.arcsec):.2f}\", max {sep.arcsec.max():.2f}\"")
    if failures:
        print("\n".join(failures))
        raise SystemExit(f"{len(failures)} consistency checks of the copied tables failed")

    names, aliases, ra, dec, dist, dm, ebv, feh, rh, vt, dsrc, notes = ([] for _ in range(12))
    extra = {key: [] for key in ("v_hb", "dm_v", "mu_v", "r_c", "c", "ub", "bv", "vr", "vi")}
    for r, c in zip(part1, icrs):
        p2, p3 = part2[r["id"]], part3[r["id"]]
        lv = lv_by_id.get(r["id"])
        note_parts = []
        ra_i, dec_i = round(c.ra.deg, 6), round(c.dec.deg, 6)
        if lv is not None and lv_sep[r["id"]] > 120.0:
            # Harris 2010's centre is off by several arcmin (Terzan 10); a
            # planner needs a position good to well under a field width.
            ra_i, dec_i = float(lv["ra"]), float(lv["dec"])
            note_parts.append(
                f"position from the Local Volume Database (Harris 2010 position is "
                f"{lv_sep[r['id']] / 60:.1f} arcmin away)"
            )
        al = [r["other"]] if r["other"] else []
        # "Pal N" is the usual short form of "Palomar N" (the LVDB writes the long form).
        for a in [r["id"], *al]:
            if a.startswith("Pal "):
                al.append("Palomar " + a[4:])
        if p3["collapsed"] == "c":
            note_parts.append(f"core-collapsed (Harris flag c): the concentration {p3['c']} is nominal")
        elif p3["collapsed"]:
            note_parts.append("possibly core-collapsed (Harris flag c:)")
        if r["id"] == "Lynga 7":
            note_parts.append("[Fe/H] -1.01 as in the mwgc.dat copy used (and as the Local Volume Database "
                              "quotes Harris); another public copy of the 2010 edition has -0.67")
        if lv is not None and lv["ref_distance"].startswith("Baumgardt2021"):
            dm_i = float(lv["distance_modulus"])
            d_i = round(10 ** (dm_i / 5 - 2), 3)
            src = "BV21"
        else:
            d_i = r["r_sun_kpc"]
            dm_i = round(5 * math.log10(d_i * 100), 3)
            src = "H10"
            note_parts.append("distance: Harris 2010 R_Sun (no Baumgardt & Vasiliev 2021 value in the compilation used)")
        names.append(r["id"])
        aliases.append(";".join(al))
        ra.append(ra_i)
        dec.append(dec_i)
        dist.append(d_i)
        dm.append(dm_i)
        ebv.append(p2["ebv"])
        feh.append(p2["feh"])
        rh.append(p3["r_h"])
        vt.append(p2["v_t"])
        dsrc.append(src)
        for key in extra:
            extra[key].append(p2[key] if key in p2 else p3[key])
        notes.append("; ".join(note_parts))

    def masked(values, unit=None, description=""):
        arr = np.array([np.nan if v is None else v for v in values], dtype=float)
        return MaskedColumn(arr, mask=np.isnan(arr), unit=unit, description=description)

    t = Table()
    t["name"] = MaskedColumn(names, description="Harris 2010 cluster identification (Part I column 1)")
    t["aliases"] = MaskedColumn(aliases, description="other names, ';'-separated")
    t["ra_deg"] = masked(ra, u.deg, "right ascension, ICRS (Harris 2010 J2000)")
    t["dec_deg"] = masked(dec, u.deg, "declination, ICRS (Harris 2010 J2000)")
    t["distance_kpc"] = masked(dist, u.kpc, "heliocentric distance")
    t["distance_modulus_mag"] = masked(dm, u.mag, "true distance modulus 5 log10(d / 10 pc)")
    t["ebv_mag"] = masked(ebv, u.mag, "foreground reddening E(B-V), Harris 2010")
    t["feh_dex"] = masked(feh, None, "[Fe/H], Harris 2010")
    t["half_light_radius_arcmin"] = masked(rh, u.arcmin, "half-light radius r_h, Harris 2010")
    t["v_mag"] = masked(vt, u.mag, "integrated V magnitude V_t, Harris 2010")
    t["v_hb_mag"] = masked(extra["v_hb"], u.mag, "observed V of the horizontal branch V_HB, Harris 2010")
    t["distance_modulus_v_mag"] = masked(extra["dm_v"], u.mag, "apparent visual distance modulus (m-M)_V, Harris 2010")
    t["central_sb_v_mag_arcsec2"] = masked(extra["mu_v"], u.mag / u.arcsec**2,
                                           "central V surface brightness mu_V, Harris 2010")
    t["core_radius_arcmin"] = masked(extra["r_c"], u.arcmin, "King core radius r_c, Harris 2010")
    t["king_concentration"] = masked(extra["c"], None, "King concentration c = log10(r_t / r_c), Harris 2010")
    for key, colour in (("ub", "U-B"), ("bv", "B-V"), ("vr", "V-R"), ("vi", "V-I")):
        t[f"{key}_integrated_mag"] = masked(extra[key], u.mag, f"integrated colour {colour}, observed, Harris 2010")
    t["distance_source"] = MaskedColumn(dsrc, description="BV21 or H10, see meta distance_sources")
    t["notes"] = MaskedColumn(notes, description="per-row remarks")
    t.meta.update(build_meta())
    t.write(OUT, format="ascii.ecsv", overwrite=True)
    print(f"wrote {len(t)} rows to {OUT}; {dsrc.count('BV21')} BV21 distances, {dsrc.count('H10')} H10")


def build_meta() -> dict:
    return {
        "comments": [
            "Milky Way globular clusters: the full list (157 objects) of Harris 1996, AJ 112, 1487",
            "(2010 edition), with Baumgardt & Vasiliev 2021 (MNRAS 505, 5957) distances where",
            "available. Positions ICRS (J2000). Sources, method and caveats are in the meta block.",
            "Harris asks that users cite 'Harris 1996 (2010 edition)' and that redistribution",
            "refer to the original source and be free of charge.",
        ],
        "title": "gcplan bundled Milky Way globular cluster catalog",
        "frame": "ICRS",
        "epoch": "J2000.0 (positions as published by Harris 2010, FK5 J2000; the FK5-ICRS offset, "
        "below 0.1 arcsec, is far smaller than the catalogue's precision)",
        "column_sources": {
            "name": "Harris 2010 Part I col. 1 (ID)",
            "aliases": "Harris 2010 Part I col. 2 (other commonly used name); 'Palomar N' added for every "
            "'Pal N' (the long form, as the Local Volume Database writes it)",
            "ra_deg, dec_deg": "Harris 2010 Part I cols. 3-4, converted from sexagesimal (Terzan 10: "
            "Local Volume Database, see notes)",
            "distance_kpc, distance_modulus_mag": "per row, see distance_source and distance_sources",
            "ebv_mag": "Harris 2010 Part II col. 4, E(B-V)",
            "feh_dex": "Harris 2010 Part II col. 2, [Fe/H]",
            "half_light_radius_arcmin": "Harris 2010 Part III col. 9, r_h",
            "v_mag": "Harris 2010 Part II col. 7, V_t",
            "v_hb_mag": "Harris 2010 Part II col. 5, V_HB (observed, not corrected for extinction)",
            "distance_modulus_v_mag": "Harris 2010 Part II col. 6, (m-M)_V",
            "ub_integrated_mag, bv_integrated_mag, vr_integrated_mag, vi_integrated_mag":
                "Harris 2010 Part II cols. 9-12, integrated U-B, B-V, V-R, V-I (observed, reddened)",
            "king_concentration": "Harris 2010 Part III col. 7, c; core-collapsed clusters (flag c, "
            "see notes) carry the nominal 2.5",
            "core_radius_arcmin": "Harris 2010 Part III col. 8, r_c",
            "central_sb_v_mag_arcsec2": "Harris 2010 Part III col. 10, mu_V (observed, not corrected for "
            "extinction)",
        },
        "distance_sources": {
            "BV21": "Baumgardt H., Vasiliev E. 2021, MNRAS 505, 5957 (2021MNRAS.505.5957B), mean distances "
            "from Gaia EDR3, HST and literature data; taken as the true distance modulus to 3 decimals "
            "quoted (ref_distance = Baumgardt2021MNRAS.505.5957B) in the Local Volume Database, Pace 2024 "
            "(github.com/apace7/local_volume_database, data/gc_harris.csv, commit 03e11d7f); "
            "distance_kpc = 10**(distance_modulus_mag / 5 - 2) rounded to 1 pc",
            "H10": "Harris 2010 Part I col. 7, R_Sun (0.1 kpc precision); distance_modulus_mag = "
            "5 log10(R_Sun / 10 pc). Used where the compilation above quotes no Baumgardt & Vasiliev "
            "2021 distance.",
        },
        "references": [
            "Harris W. E. 1996, AJ 112, 1487; 'Harris 1996 (2010 edition)', mwgc.dat, revision December 2010, "
            "http://www.physics.mcmaster.ca/resources/globular.html",
            "Baumgardt H., Vasiliev E. 2021, MNRAS 505, 5957",
            "Pace A. B. 2024, Local Volume Database, https://github.com/apace7/local_volume_database",
        ],
        "construction": (
            "Built offline once, not at run time. The data rows of the three parts of mwgc.dat "
            "(copy in the public repository balbinot/mwgc, commit ac6a8b26) and the columns named "
            "above of the Local Volume Database's gc_harris.csv were copied verbatim to text files "
            "(tests/data/catalog_sources/) and read by tests/data/make_catalog.py. Before writing, the script checked the copy: every "
            "position either reproduces Harris's own Galactic l, b to 0.012 deg or lies within 10 arcsec "
            "of the Local Volume Database position (median offset 0.07 arcsec); M_V,t = V_t - (m-M)_V to "
            "0.01 mag; (m-M)_V - 3.1 E(B-V) agrees with R_Sun within its rounding; r_h >= r_c where "
            "King c >= 0.7; a second public copy of the catalogue (OddThumb/xrbgc, HarrisCAT/Harris_CAT.csv) "
            "gives the same [Fe/H], E(B-V), V_t and r_h for all 157 rows except Lynga 7's [Fe/H] (see its notes); "
            "the [Fe/H] values the Local Volume Database credits to Harris equal these "
            "(except Terzan 1 and Terzan 5, where it quotes other values; Harris's are kept). "
            "One position is not Harris's: Terzan 10, whose Harris 2010 centre lies 8.7 arcmin from the "
            "modern one (see its notes). Rows are in Harris's order. Missing values are masked (empty): "
            "[Fe/H] for Ko 1, Ko 2, FSR 1735, 2MS-GC01, GLIMPSE01; V_t for GLIMPSE02; r_h for Pyxis, "
            "Liller 1, UKS 1, NGC 6540, GLIMPSE02; structural parameters and integrated colours where Harris "
            "gives none. No value was typed from memory (the notes column "
            "would say so)."),
    }


if __name__ == "__main__":
    main()

"""Writes the demo's files from one table, so they cannot drift apart.

The site is invented (Quarry Hill Joinery, unit 4): boards DB1 (TN-C-S origin),
DB2 (workshop, fed from DB1/5) and DB3 (TT yard cabin, fed from DB2/4). The
schedule is the job-management system's JSON, DB1's readings a meter CSV in an
invented layout (profile example-semicolon-decimal-comma), DB2/DB3 a field
logger's key=value lines. demo-site.json is the site document: the installation
once (TN-C-S, U0, Ze and PFC at the origin, the test temperature), the boards
with their facts (DB2's Zdb and PFC, fed from DB1/5; DB3 a TT cabin with its own
RA, fed from DB2/4) and the circuits, which inherit those facts instead of
repeating them (so its circuits carry no earthing, feeder, Ze, PFC or RA).
Every check shows a pass and a fail somewhere: additional protection (DB1/2
passes; the cooker DB1/7, cables concealed in the wall, has no RCD), overload
(the ring DB1/2 passes Reg. 433.1.204; the water heater DB1/4 on a B20 in an
insulated wall, method 101, does not), protective conductor (DB1/2 passes the
adiabatic check; the compressor feed DB1/10, a 1.5 mm² cpc with 16 mm² lines
on a 63 A fuse, fails it). DB1/10 names its fuse's standard only: the verdict
shows the device kind it infers.
tests/api/test_demo_data.py checks that the uploads merge into demo-site.json.

Run: python examples/demo/build.py
"""
# ruff: noqa
from pathlib import Path

HERE = Path(__file__).resolve().parent
import json
common1 = {"earthing": "TN-C-S", "nominal_voltage_v": 230, "test_temp_c": 20}
design = [
 # DB1: main consumer unit in the office block
 dict(board="DB1", circuit="1", description="Office lighting", load_type="lighting", device_kind="breaker", device_standard="BS EN 60898", device_curve="B", device_rating_a=6, device_breaking_ka=6, line_mm2=1.5, cpc_mm2=1.0, length_m=24, cable_type="twin_and_earth", reference_method="100"),
 dict(board="DB1", circuit="2", description="Office sockets ring", circuit_form="ring", socket_outlets=True, device_kind="rcbo", device_standard="BS EN 61009", device_curve="B", device_rating_a=32, device_breaking_ka=6, rcd_residual_ma=30, rcd_type="A", line_mm2=2.5, cpc_mm2=1.5, length_m=52, cable_type="twin_and_earth", reference_method="C"),
 dict(board="DB1", circuit="3", description="Kitchenette sockets ring", circuit_form="ring", socket_outlets=True, device_kind="rcbo", device_standard="BS EN 61009", device_curve="B", device_rating_a=32, device_breaking_ka=6, rcd_residual_ma=30, rcd_type="A", line_mm2=2.5, cpc_mm2=1.5, length_m=46, cable_type="twin_and_earth", reference_method="A"),
 dict(board="DB1", circuit="4", description="Water heater", device_kind="breaker", device_standard="BS EN 60898", device_curve="B", device_rating_a=20, device_breaking_ka=6, line_mm2=2.5, cpc_mm2=1.5, length_m=28, cable_type="twin_and_earth", reference_method="101"),
 dict(board="DB1", circuit="5", description="Workshop sub-main to DB2", circuit_role="distribution", device_kind="fuse", device_standard="BS 88-2", device_rating_a=63, device_breaking_ka=80, design_current_a=45, line_mm2=16, cpc_mm2=6, length_m=38, cable_type="multicore", reference_method="C"),
 dict(board="DB1", circuit="6", description="Yard floodlights", load_type="lighting", device_kind="breaker", device_standard="BS EN 60898", device_curve="B", device_rating_a=10, device_breaking_ka=6, line_mm2=1.5, cpc_mm2=1.0, length_m=60, cable_type="twin_and_earth", reference_method="C"),
 dict(board="DB1", circuit="7", description="Cooker", device_kind="breaker", device_standard="BS EN 60898", device_curve="B", device_rating_a=32, device_breaking_ka=6, line_mm2=6, cpc_mm2=2.5, length_m=14, cable_type="twin_and_earth", reference_method="C", concealed_in_wall=True),
 dict(board="DB1", circuit="8", description="Boiler spur", device_kind="breaker", device_standard="BS EN 60898", device_curve="B", device_rating_a=6, device_breaking_ka=6, line_mm2=1.5, cpc_mm2=1.0, length_m=9, cable_type="twin_and_earth", reference_method="C"),
 dict(board="DB1", circuit="9", description="Store-room sockets", socket_outlets=True, device_kind="rcbo", device_standard="BS EN 61009", device_curve="B", device_rating_a=20, device_breaking_ka=6, rcd_residual_ma=30, rcd_type="A", line_mm2=2.5, cpc_mm2=1.5, length_m=26, cable_type="twin_and_earth", reference_method="C"),
 dict(board="DB1", circuit="10", description="Compressor feed (16 mm² singles, 1.5 mm² cpc)", socket_outlets=False, device_standard="BS 88-2", device_rating_a=63, device_breaking_ka=80, line_mm2=16, cpc_mm2=1.5, length_m=28, cable_type="single_core", reference_method="B"),
 # DB2: workshop board, fed from DB1/5
 dict(board="DB2", circuit="1", description="Panel saw (three-phase)", phases=3, device_kind="breaker", device_standard="BS EN 60898", device_curve="C", device_rating_a=20, device_breaking_ka=10, design_current_a=14, line_mm2=4, cpc_mm2=2.5, length_m=22, cable_type="single_core", reference_method="B"),
 dict(board="DB2", circuit="2", description="Bench sockets", socket_outlets=True, device_kind="rcbo", device_standard="BS EN 61009", device_curve="B", device_rating_a=32, device_breaking_ka=6, rcd_residual_ma=30, rcd_type="A", design_current_a=20, line_mm2=4, cpc_mm2=1.5, length_m=30, cable_type="twin_and_earth", reference_method="C"),
 dict(board="DB2", circuit="3", description="Spray booth extract fan", device_kind="breaker", device_standard="BS EN 60898", device_curve="C", device_rating_a=16, device_breaking_ka=6, line_mm2=2.5, cpc_mm2=1.5, length_m=17, cable_type="twin_and_earth", reference_method="C"),
 dict(board="DB2", circuit="4", description="Yard cabin sub-main to DB3", circuit_role="distribution", device_kind="breaker", device_standard="BS EN 60898", device_curve="C", device_rating_a=32, device_breaking_ka=6, design_current_a=20, line_mm2=10, cpc_mm2=4, length_m=25, cable_type="multicore", reference_method="C"),
 # DB3: yard cabin, fed from DB2/4, TT with its own electrode
 dict(board="DB3", circuit="1", description="Cabin sockets", earthing="TT", socket_outlets=True, device_kind="rcbo", device_standard="BS EN 61009", device_curve="B", device_rating_a=16, device_breaking_ka=6, rcd_residual_ma=30, rcd_type="A", line_mm2=2.5, cpc_mm2=1.5, length_m=12, cable_type="twin_and_earth", reference_method="C"),
 dict(board="DB3", circuit="2", description="Cabin heater", earthing="TT", device_kind="rcbo", device_standard="BS EN 61009", device_curve="B", device_rating_a=16, device_breaking_ka=6, rcd_residual_ma=30, rcd_type="A", line_mm2=2.5, cpc_mm2=1.5, length_m=8, cable_type="twin_and_earth", reference_method="C"),
]
for d in design:
    d.setdefault("earthing", "TN-C-S")
    if d["board"] == "DB2": d["board_fed_from"] = "DB1/5"
    if d["board"] == "DB3": d["board_fed_from"] = "DB2/4"
# readings, by circuit
R = {
 ("DB1","1"): dict(r1_r2_ohm=0.74, zs_ohm=0.96, ir_test_v=500, ir_ll_mohm=">999", ir_le_mohm=">999", polarity_ok=True),
 ("DB1","2"): dict(ring_r1_ohm=0.48, ring_rn_ohm=0.49, ring_r2_ohm=0.79, r1_r2_ohm=0.33, zs_ohm=0.56, ir_test_v=500, ir_ll_mohm=">999", ir_le_mohm=">999", polarity_ok=True, rcd_trip_ms=21.4, rcd_trip_5x_ms=12.1),
 ("DB1","3"): dict(ring_r1_ohm=0.34, ring_rn_ohm=0.52, ring_r2_ohm=0.56, r1_r2_ohm=0.23, zs_ohm=0.45, ir_test_v=500, ir_ll_mohm=">999", ir_le_mohm=">999", polarity_ok=True, rcd_trip_ms=24.0),
 ("DB1","4"): dict(r1_r2_ohm=0.55, zs_ohm=0.78, ir_test_v=500, ir_ll_mohm=">999", ir_le_mohm="350", polarity_ok=True),
 ("DB1","5"): dict(r1_r2_ohm=0.16, zs_ohm=0.38, ir_test_v=500, ir_ll_mohm=">999", ir_le_mohm=">999", polarity_ok=True),
 ("DB1","6"): dict(r1_r2_ohm=1.84, zs_ohm=2.05, ir_test_v=500, ir_ll_mohm=">999", ir_le_mohm="180", polarity_ok=True),
 ("DB1","7"): dict(r1_r2_ohm=0.15, zs_ohm=0.37, ir_test_v=500, ir_ll_mohm="120", ir_le_mohm="1.4", polarity_ok=True),
 ("DB1","8"): dict(r1_r2_ohm=0.28, zs_ohm=0.49, ir_test_v=500, ir_ll_mohm=">999", ir_le_mohm=">999", polarity_ok=False),
 ("DB1","9"): dict(r1_r2_ohm=0.52, zs_ohm=1.36, ir_test_v=500, ir_ll_mohm=">999", ir_le_mohm=">999", polarity_ok=True, rcd_trip_ms=27.5),
 ("DB1","10"): dict(r1_r2_ohm=0.37, zs_ohm=0.59, ir_test_v=500, ir_ll_mohm=">999", ir_le_mohm=">999", polarity_ok=True),
 ("DB2","1"): dict(r1_r2_ohm=0.27, zs_ohm=0.65, ir_test_v=500, ir_ll_mohm=">999", ir_le_mohm=">999", polarity_ok=True),
 ("DB2","2"): dict(r1_r2_ohm=0.37, zs_ohm=0.76, ir_test_v=500, ir_ll_mohm=">999", ir_le_mohm=">999", polarity_ok=True, rcd_trip_ms=338, rcd_half_no_trip=True),
 ("DB2","3"): dict(r1_r2_ohm=0.34, zs_ohm=0.73, ir_test_v=500, ir_ll_mohm="0.62", ir_le_mohm="0.62", polarity_ok=True),
 ("DB2","4"): dict(r1_r2_ohm=0.16, zs_ohm=0.57, ir_test_v=500, ir_ll_mohm=">999", ir_le_mohm=">999", polarity_ok=True),
 ("DB3","1"): dict(r1_r2_ohm=0.24, zs_ohm=71.3, ir_test_v=500, ir_ll_mohm=">999", ir_le_mohm=">999", polarity_ok=True, rcd_trip_ms=26.0),
 ("DB3","2"): dict(r1_r2_ohm=0.17, ir_test_v=500, ir_ll_mohm=">999", ir_le_mohm=">999", polarity_ok=True),
}
# Measured once for the site, not per circuit: Ze and PFC at the origin and the test temperature
# (the logger's installation line), DB2's Zdb and PFC and DB3's electrode RA (its board lines).
ORIGIN = {"ze_ohm": 0.22, "pfc_ka": 1.04, "test_temp_c": 20}
BOARD_READINGS = {"DB2": {"zdb_ohm": 0.39, "pfc_ka": 0.61}, "DB3": {"ra_ohm": 68}}
recs=[]
for d in design:
    r = dict(d); r.update(R[(d["board"], d["circuit"])]); recs.append(r)


# ---- split into the three demo uploads ----
import os
out = str(HERE)
os.makedirs(out, exist_ok=True)
READING_KEYS = {"r1_r2_ohm","zs_ohm","ze_ohm","pfc_ka","ir_test_v","ir_ll_mohm","ir_le_mohm","polarity_ok","ring_r1_ohm","ring_rn_ohm","ring_r2_ohm","rcd_trip_ms","rcd_trip_5x_ms","rcd_half_no_trip","ra_ohm"}
# The schedule: the job-management system's site document (the installation and boards as designed,
# the circuits' design data); what the tester measures comes in the other two uploads.
SCHEDULE_INSTALLATION = {"description": "Quarry Hill Joinery, unit 4 (invented demo site)", "earthing": "TN-C-S",
                         "nominal_voltage_v": 230, "supply": "public"}
SCHEDULE_BOARDS = [
 {"board": "DB1", "description": "Main board", "location": "office block, entrance"},
 {"board": "DB2", "description": "Workshop board", "location": "workshop, north wall", "board_fed_from": "DB1/5"},
 {"board": "DB3", "description": "Yard cabin board", "location": "yard cabin", "board_fed_from": "DB2/4",
  "earthing": "TT"},
]
schedule = [{k: v for k, v in d.items() if k not in ("earthing", "board_fed_from")} for d in design]
json.dump({"ruleset": "bs7671-2018-a2", "installation": SCHEDULE_INSTALLATION, "boards": SCHEDULE_BOARDS,
           "circuits": schedule}, open(f"{out}/schedule.json","w"), indent=1, ensure_ascii=False)
# DB1 via a meter CSV export (profile example-semicolon-decimal-comma: ; separated, decimal comma, cp1252, units in cells)
def dc(x, unit):
    if isinstance(x, str): return x.replace(".", ",") + (" " + unit if unit else "")
    s = ("%g" % x).replace(".", ",")
    return s + (" " + unit if unit else "")
cols = ["Dist","Ref","Cont Ends","Loop","Ze","PFC","r1","rn","Ring r2","IRes V","IRes LN","IRes LE","Pol","Trip Time","Trip Time Fast","Cable Temp"]
rows = ["Site export;Quarry Hill Joinery unit 4 (invented demo site);;;", ";".join(cols)]
for d in design:
    if d["board"] != "DB1": continue
    r = R[(d["board"], d["circuit"])]
    def g(k, unit): return dc(r[k], unit) if k in r else ""
    cells = [d["board"], d["circuit"], g("r1_r2_ohm","Ohm"), g("zs_ohm","Ohm"), g("ze_ohm","Ohm"), g("pfc_ka","kA"),
             g("ring_r1_ohm","Ohm"), g("ring_rn_ohm","Ohm"), g("ring_r2_ohm","Ohm"), g("ir_test_v","V"),
             (r["ir_ll_mohm"] + " MOhm") if isinstance(r["ir_ll_mohm"], str) and r["ir_ll_mohm"].startswith(">") else g("ir_ll_mohm","MOhm"),
             (r["ir_le_mohm"] + " MOhm") if isinstance(r["ir_le_mohm"], str) and r["ir_le_mohm"].startswith(">") else g("ir_le_mohm","MOhm"),
             "OK" if r["polarity_ok"] else "X", g("rcd_trip_ms","ms"), g("rcd_trip_5x_ms","ms"), g("test_temp_c", "°C")]
    rows.append(";".join(cells))
open(f"{out}/db1-meter-export.csv","w",encoding="cp1252",newline="").write("\r\n".join(rows)+"\r\n")
# DB2 and DB3 via the field logger's text lines (our key=value format)
import binascii
def ck(line):
    b = line.encode()
    return line + " *" + f"{binascii.crc_hqx(b, 0xFFFF):04X}"
lines = ["# Field logger capture, Quarry Hill Joinery unit 4 (invented demo site), 2026-11-24",
         "# one line per test as the tester saves it; a checksum ends the lines the logger signs",
         "# at the origin: Ze, PFC and the conductor temperature, for the whole installation",
         ck(f"installation ze={ORIGIN['ze_ohm']:g}Ω pfc={ORIGIN['pfc_ka']:g}kA test_temp_c={ORIGIN['test_temp_c']:g}")]
unit = {"r1_r2_ohm":"Ω","zs_ohm":"Ω","ra_ohm":"Ω","ir_ll_mohm":"MΩ","ir_le_mohm":"MΩ","rcd_trip_ms":"ms","ir_test_v":"V"}
alias = {"r1_r2_ohm":"R1+R2","zs_ohm":"Zs","ra_ohm":"RA","ir_ll_mohm":"IR_L-N","ir_le_mohm":"IR_L-E","rcd_trip_ms":"rcd_trip_ms","ir_test_v":"ir_test_v","polarity_ok":"polarity_ok","rcd_half_no_trip":"rcd_half_no_trip"}
board = None
for d in design:
    if d["board"] == "DB1": continue
    if d["board"] != board:  # a board line: the board's own readings, and the board for what follows
        board = d["board"]
        facts = " ".join(f"{ {'zdb_ohm': 'zdb', 'pfc_ka': 'pfc', 'ra_ohm': 'ra'}[k]}={v:g}{ {'pfc_ka': 'kA'}.get(k, 'Ω')}"
                         for k, v in BOARD_READINGS[board].items())
        lines.append(ck(f"board={board} {facts}"))
    r = R[(d["board"], d["circuit"])]
    lines.append(f"circuit={d['circuit']}")
    for k, v in r.items():
        if k == "ir_test_v": val = "%gV" % v; lines.append(ck(f"IR_V={val}")); continue
        if isinstance(v, bool): val = "yes" if v else "no"
        elif isinstance(v, str): val = v + unit.get(k, "")
        else: val = ("%g" % v) + unit.get(k, "")
        key = alias.get(k, k)
        if " " in key or "-" in key: key = key
        lines.append(ck(f"{key}={val}"))
open(f"{out}/db2-db3-logger.log","w",encoding="utf-8").write("\n".join(lines)+"\n")
# ---- the site document: facts recorded once, inherited by the circuits ----
installation = {**SCHEDULE_INSTALLATION, **ORIGIN}
boards = [{**b, **BOARD_READINGS.get(b["board"], {})} for b in SCHEDULE_BOARDS]
SAID_ONCE = {"earthing", "board_fed_from", "ze_ohm", "pfc_ka", "ra_ohm", "test_temp_c"}  # the site says them
circuits = [{k: v for k, v in r.items() if k not in SAID_ONCE} for r in recs]
json.dump({"ruleset": "bs7671-2018-a2", "installation": installation, "boards": boards, "circuits": circuits},
          open(str(HERE.parent / "demo-site.json"),"w"), indent=1, ensure_ascii=False)
# ---- the previous visit: the same installation inspected on 2021-11-16 (invented) ----
# Posted first by `ohmtally demo` into a job with the same installation_ref and an earlier tested_on, so
# the demo job's verdicts compare each circuit with it (the previous_visit check) and
# GET /v1/jobs/<id>/changes lists what changed. Since then: the cooker's insulation has fallen to a few
# MΩ (DB1/7), the store-room sockets' R1+R2 has risen by a third and their Zs with it (DB1/9), the spray
# booth fan's breaker was changed from C10 to C16 (DB2/3), an old sign-lighting circuit (DB1/11) was
# removed, and the yard cabin (DB3) was built: its circuits are new, listed as appeared, not judged.
PREVIOUS_DATE = "2021-11-16"
R_PREVIOUS = {
 ("DB1","1"): dict(r1_r2_ohm=0.73, zs_ohm=0.94, ir_test_v=500, ir_ll_mohm=">999", ir_le_mohm=">999", polarity_ok=True),
 ("DB1","2"): dict(ring_r1_ohm=0.47, ring_rn_ohm=0.48, ring_r2_ohm=0.78, r1_r2_ohm=0.32, zs_ohm=0.54, ir_test_v=500, ir_ll_mohm=">999", ir_le_mohm=">999", polarity_ok=True, rcd_trip_ms=19.8, rcd_trip_5x_ms=11.6),
 ("DB1","3"): dict(ring_r1_ohm=0.34, ring_rn_ohm=0.52, ring_r2_ohm=0.55, r1_r2_ohm=0.23, zs_ohm=0.44, ir_test_v=500, ir_ll_mohm=">999", ir_le_mohm=">999", polarity_ok=True, rcd_trip_ms=23.1),
 ("DB1","4"): dict(r1_r2_ohm=0.54, zs_ohm=0.76, ir_test_v=500, ir_ll_mohm=">999", ir_le_mohm="420", polarity_ok=True),
 ("DB1","5"): dict(r1_r2_ohm=0.16, zs_ohm=0.37, ir_test_v=500, ir_ll_mohm=">999", ir_le_mohm=">999", polarity_ok=True),
 ("DB1","6"): dict(r1_r2_ohm=1.81, zs_ohm=2.02, ir_test_v=500, ir_ll_mohm=">999", ir_le_mohm="210", polarity_ok=True),
 ("DB1","7"): dict(r1_r2_ohm=0.15, zs_ohm=0.36, ir_test_v=500, ir_ll_mohm=">999", ir_le_mohm=">999", polarity_ok=True),
 ("DB1","8"): dict(r1_r2_ohm=0.28, zs_ohm=0.48, ir_test_v=500, ir_ll_mohm=">999", ir_le_mohm=">999", polarity_ok=True),
 ("DB1","9"): dict(r1_r2_ohm=0.39, zs_ohm=0.6, ir_test_v=500, ir_ll_mohm=">999", ir_le_mohm=">999", polarity_ok=True, rcd_trip_ms=25.9),
 ("DB1","10"): dict(r1_r2_ohm=0.36, zs_ohm=0.58, ir_test_v=500, ir_ll_mohm=">999", ir_le_mohm=">999", polarity_ok=True),
 ("DB1","11"): dict(r1_r2_ohm=0.92, zs_ohm=1.13, ir_test_v=500, ir_ll_mohm=">999", ir_le_mohm=">999", polarity_ok=True),
 ("DB2","1"): dict(r1_r2_ohm=0.27, zs_ohm=0.64, ir_test_v=500, ir_ll_mohm=">999", ir_le_mohm=">999", polarity_ok=True),
 ("DB2","2"): dict(r1_r2_ohm=0.36, zs_ohm=0.74, ir_test_v=500, ir_ll_mohm=">999", ir_le_mohm=">999", polarity_ok=True, rcd_trip_ms=31.5, rcd_half_no_trip=True),
 ("DB2","3"): dict(r1_r2_ohm=0.34, zs_ohm=0.72, ir_test_v=500, ir_ll_mohm="2.1", ir_le_mohm="1.6", polarity_ok=True),
 ("DB2","4"): dict(r1_r2_ohm=0.16, zs_ohm=0.55, ir_test_v=500, ir_ll_mohm=">999", ir_le_mohm=">999", polarity_ok=True),
}
SIGN = dict(board="DB1", circuit="11", description="Sign lighting (removed since)", load_type="lighting", device_kind="breaker", device_standard="BS EN 60898", device_curve="B", device_rating_a=6, device_breaking_ka=6, line_mm2=1.5, cpc_mm2=1.0, length_m=30, cable_type="twin_and_earth", reference_method="C")
previous_design = [dict(d) for d in design if d["board"] != "DB3"] + [SIGN]
for d in previous_design:
    if (d["board"], d["circuit"]) == ("DB2", "3"): d["device_rating_a"] = 10
previous_circuits = [{**{k: v for k, v in d.items() if k not in SAID_ONCE}, **R_PREVIOUS[(d["board"], d["circuit"])]}
                     for d in previous_design]
previous_installation = {**SCHEDULE_INSTALLATION, "ze_ohm": 0.21, "pfc_ka": 1.09, "test_temp_c": 20}
previous_boards = [{**b, **({"zdb_ohm": 0.37, "pfc_ka": 0.64} if b["board"] == "DB2" else {})}
                   for b in SCHEDULE_BOARDS if b["board"] != "DB3"]
json.dump({"ruleset": "bs7671-2018-a2", "installation": previous_installation, "boards": previous_boards,
           "circuits": previous_circuits}, open(f"{out}/previous-visit.json","w"), indent=1, ensure_ascii=False)

"""Every key of the case schema changes what a run does or writes (issue 11, item 2).

The walk covers the whole schema: each key path of ``SCHEMA`` has an entry
here with a mutation of a small base case and the probe that must change —
the engines' output (critical surfaces and FS, the single-variable
reliability, the simulated FS), the arguments the sweep command hands the
simulation engine, the risk points of the risk chart, or the written report.
A key added to the schema without an entry here fails
``test_walk_covers_the_whole_schema``; a key whose mutation changes nothing
fails ``test_key_changes_the_run``. These checks are of slipfield's own
schema (no outside source); the base case is invented.
"""
from __future__ import annotations

import json
import math

import numpy as np
import pytest

from slipfield.slope.case.build import load_case
from slipfield.slope.case.schema import SCHEMA

from support.demos import CASES

BASE = """
[case]
title = "walk base"
note = "invented"
[section]
ground = [[0.0, 10.0], [10.0, 10.0], [25.0, 0.0], [40.0, 0.0]]
bottom = -5.0
[[section.zone]]
name = "all"
material = "clay"
polygon = [[0.0, -5.0], [40.0, -5.0], [40.0, 0.0], [25.0, 0.0], [10.0, 10.0], [0.0, 10.0]]
[[material]]
name = "clay"
unit_weight = 18.0
c = 8.0
phi = 25.0
su = 40.0
[water]
phreatic = [[0.0, 8.0], [25.0, 0.0], [40.0, 0.0]]
[analysis]
hypotheses = ["drained", "undrained"]
methods = ["bishop", "spencer"]
slices = 8
[search]
trials = 40
[[random]]
material = "clay"
property = "c"
cov = 0.3
theta_h = 10.0
theta_v = 2.0
[[random]]
material = "clay"
property = "phi"
cov = 0.1
theta_h = 10.0
theta_v = 2.0
[[random]]
material = "clay"
property = "su"
cov = 0.3
theta_h = 10.0
theta_v = 2.0
[simulation]
realisations = 6
cell = 2.0
batch = 3
[reliability]
samples = 20
methods = ["monte-carlo"]
[sweep]
theta_h = [5.0, "inf"]
theta_v = [1.0]
[risk]
annual_exceedance = 0.01
consequence = 2.0
"""


def sub(old, new, text=BASE):
    assert old in text, old
    return text.replace(old, new, 1)


def add(extra, text=BASE):
    return text + "\n" + extra + "\n"


ZONE = '''[[section.zone]]
name = "all"
material = "clay"
polygon = [[0.0, -5.0], [40.0, -5.0], [40.0, 0.0], [25.0, 0.0], [10.0, 10.0], [0.0, 10.0]]'''
SAND = '[[material]]\nname = "sand"\nunit_weight = 19.0\nc = 1.0\nphi = 35.0\nsu = 60.0'
LAYERS = add(SAND, sub(ZONE, '''[[section.layer]]
name = "upper"
material = "sand"
bottom = 3.0
[[section.layer]]
name = "lower"
material = "clay"'''))
TWO_ZONES = add(SAND, sub(ZONE, '''[[section.zone]]
name = "upper"
material = "sand"
polygon = [[0.0, 3.0], [20.5, 3.0], [10.0, 10.0], [0.0, 10.0]]
[[section.zone]]
name = "lower"
material = "clay"
polygon = [[0.0, -5.0], [40.0, -5.0], [40.0, 0.0], [25.0, 0.0], [20.5, 3.0], [0.0, 3.0]]'''))
RISK_HYPOTHESIS = '''[[risk.hypothesis]]
name = "drained"
annual_probability = 0.5
condition = "invented"'''
TOLERABILITY = '''[[risk.tolerability]]
label = "line A"
source = "invented"
points = [[1.0, 1e-3], [100.0, 1e-5]]'''
FIXED = sub("trials = 40", 'kind = "fixed"\ncircle = { x = 18.0, y = 18.0, r = 17.0 }')
WINDOW = sub("trials = 40", 'kind = "window"\ntrials = 40\nentry = [2.0, 10.0]\nexit = [24.0, 32.0]')
UNIFORM = sub('property = "c"\ncov = 0.3', 'property = "c"\ndistribution = "uniform"\nlower = 4.0\nupper = 12.0')
TRIANGULAR = sub('property = "c"\ncov = 0.3',
                 'property = "c"\ndistribution = "triangular"\nlower = 4.0\nmode = 7.0\nupper = 12.0')
BETA = sub('property = "c"\ncov = 0.3', 'property = "c"\ndistribution = "beta"\ncov = 0.3\nlower = 2.0\nupper = 20.0')
MATERN = sub('property = "c"\ncov = 0.3', 'property = "c"\ncov = 0.3\nmodel = "matern"')
REFINE = sub("batch = 3", "batch = 3\nrefine_below = 5.0")
SUBSET = sub("batch = 3", 'batch = 3\nestimator = "subset"')
MP = sub('methods = ["bishop", "spencer"]', 'methods = ["bishop", "morgenstern-price"]')
CRACK = add("[tension_crack]\ndepth = 2.0\nwater_filled = true")
PIEZO = add('[[water.piezometric]]\nzone = "all"\nline = [[0.0, 6.0], [40.0, 1.0]]')
SU_TABLE = sub("su = 40.0", 'su = { law = "elevation", value = 30.0, gradient = 1.0, datum = 10.0 }')
SU_RATIO = sub("su = 40.0", 'su = { law = "ratio", ratio = 0.3 }')
SU_RATIO = sub('property = "su"', 'property = "su_ratio"', SU_RATIO)
SURCHARGE = add("[[surcharge]]\nx_from = 2.0\nx_to = 8.0\nq = 20.0")
CROSS_BLOCK = '[[cross_correlation]]\nbetween = ["clay.c", "clay.phi"]\nrho = -0.5'
CROSS = add(CROSS_BLOCK)
UNIT_WEIGHT = add('[[random]]\nmaterial = "clay"\nproperty = "unit_weight"\ndistribution = "normal"\ncov = 0.05\n'
                  'theta_h = "inf"\ntheta_v = "inf"')
NO_SU_RANDOM = sub('[[random]]\nmaterial = "clay"\nproperty = "su"\ncov = 0.3\ntheta_h = 10.0\ntheta_v = 2.0\n', "")
ANNUAL_PF = sub("annual_exceedance = 0.01", "annual_pf = 1e-4")

FAMILY = """
[section]
ground = [[0.0, 10.0], [25.0, 10.0], [45.0, 0.0], [75.0, 0.0]]
bottom = -12.0
[[section.layer]]
name = "upper"
material = "clay"
bottom = -0.4
[[section.layer]]
name = "seam"
material = "seam"
bottom = -1.0
[[section.layer]]
name = "lower"
material = "clay"
[[material]]
name = "clay"
unit_weight = 20.0
c = 20.0
phi = 28.0
[[material]]
name = "seam"
unit_weight = 20.0
c = 0.0
phi = 12.0
[analysis]
hypotheses = ["drained"]
methods = ["spencer"]
method = "spencer"
slices = 12
[search]
trials = 40
"""
BLOCK = add('[[search.block]]\nzone = "seam"\nentry = [10.0, 30.0]\nexit = [45.0, 65.0]\npoints = 4', FAMILY)
DP = add("[search.dynamic_programming]\ncolumns = 6\nnodes = 5\npasses = 1", FAMILY)
SITE = add('[[site_data]]\nproperty = "clay.su"\nx = 30.0\nreadings = [[-1.0, 55.0]]')
SITE_POINTS = add('[[site_data]]\nproperty = "clay.su"\npoints = [[30.0, -1.0, 55.0]]')
SITE_FILE = add('[[site_data]]\nproperty = "clay.su"\nfile = "walk_a.csv"')
DRILL = add("[drilling]\ncandidates = [20.0]")
#: files beside every case of the walk (site data read from CSV)
CSV_FILES = {"walk_a.csv": "x,elevation,value\n30,-1,55\n", "walk_b.csv": "x,elevation,value\n30,-1,28\n"}

# key path -> (base text, mutated text, probe)
WALK = {
    "case.title": (BASE, sub('title = "walk base"', 'title = "walk mutated"'), "written"),
    "case.note": (BASE, sub('note = "invented"', 'note = "other note"'), "written"),
    "section.ground": (BASE, sub("[10.0, 10.0], [25.0, 0.0]", "[10.0, 10.0], [22.0, 0.0]").replace(
        "[25.0, 0.0], [10.0, 10.0]", "[22.0, 0.0], [10.0, 10.0]"), "det"),
    "section.bottom": (BASE, sub("bottom = -5.0", "bottom = -2.0").replace("[0.0, -5.0], [40.0, -5.0]",
                                                                          "[0.0, -2.0], [40.0, -2.0]"), "det"),
    "section.zone": (BASE, TWO_ZONES, "det"),
    "section.layer": (LAYERS, BASE, "det"),
    "section.zone.name": (BASE, sub('name = "all"', 'name = "body"'), "check"),
    "section.zone.material": (add('[[material]]\nname = "sand"\nunit_weight = 19.0\nc = 1.0\nphi = 35.0\nsu = 60.0'),
                              add('[[material]]\nname = "sand"\nunit_weight = 19.0\nc = 1.0\nphi = 35.0\nsu = 60.0',
                                  sub('material = "clay"\npolygon', 'material = "sand"\npolygon')).replace(
                                  'material = "clay"\nproperty', 'material = "sand"\nproperty'), "det"),
    "section.zone.polygon": (TWO_ZONES, TWO_ZONES.replace("[20.5, 3.0]", "[17.5, 5.0]").replace(
        "[0.0, 3.0]", "[0.0, 5.0]"), "det"),
    "section.layer.name": (LAYERS, LAYERS.replace('name = "upper"', 'name = "top"'), "check"),
    "section.layer.material": (LAYERS, LAYERS.replace('name = "upper"\nmaterial = "sand"',
                                                      'name = "upper"\nmaterial = "clay"'), "det"),
    "section.layer.bottom": (LAYERS, LAYERS.replace("bottom = 3.0", "bottom = 6.0"), "det"),
    "material.name": (CROSS, CROSS.replace('"clay"', '"silt"').replace('"clay.', '"silt.'), "rel"),
    "material.unit_weight": (BASE, sub("unit_weight = 18.0", "unit_weight = 20.0"), "det"),
    "material.unit_weight_sat": (BASE, sub("unit_weight = 18.0", "unit_weight = 18.0\nunit_weight_sat = 21.0"),
                                 "det"),
    "material.c": (BASE, sub("c = 8.0", "c = 12.0"), "det"),
    "material.phi": (BASE, sub("phi = 25.0", "phi = 30.0"), "det"),
    "material.su": (BASE, sub("su = 40.0", "su = 50.0"), "det"),
    "material.su.law": (SU_TABLE, SU_TABLE.replace('law = "elevation"', 'law = "constant"').replace(
        ", gradient = 1.0, datum = 10.0", ""), "det"),
    "material.su.value": (SU_TABLE, SU_TABLE.replace("value = 30.0", "value = 35.0"), "det"),
    "material.su.gradient": (SU_TABLE, SU_TABLE.replace("gradient = 1.0", "gradient = 2.0"), "det"),
    "material.su.datum": (SU_TABLE, SU_TABLE.replace("datum = 10.0", "datum = 5.0"), "det"),
    "material.su.ratio": (SU_RATIO, SU_RATIO.replace("ratio = 0.3", "ratio = 0.4"), "det"),
    "material.su.minimum": (SU_RATIO, SU_RATIO.replace("ratio = 0.3", "ratio = 0.3, minimum = 30.0"), "det"),
    "water.phreatic": (BASE, sub("[0.0, 8.0], [25.0, 0.0]", "[0.0, 9.5], [25.0, 0.0]"), "det"),
    "water.ru": (sub("phreatic = [[0.0, 8.0], [25.0, 0.0], [40.0, 0.0]]", "ru = 0.1"),
                 sub("phreatic = [[0.0, 8.0], [25.0, 0.0], [40.0, 0.0]]", "ru = 0.3"), "det"),
    "water.unit_weight": (BASE, sub("[water]", "[water]\nunit_weight = 10.5"), "det"),
    "water.inclination_correction": (BASE, sub("[water]", "[water]\ninclination_correction = false"), "det"),
    "water.piezometric": (BASE, PIEZO, "det"),
    "water.piezometric.zone": (add('[[water.piezometric]]\nzone = "upper"\nline = [[0.0, 12.0], [40.0, 8.0]]', LAYERS),
                               add('[[water.piezometric]]\nzone = "lower"\nline = [[0.0, 12.0], [40.0, 8.0]]', LAYERS),
                               "det"),
    "water.piezometric.line": (PIEZO, PIEZO.replace("[0.0, 6.0], [40.0, 1.0]", "[0.0, 9.0], [40.0, 1.0]"), "det"),
    "surcharge.x_from": (SURCHARGE, SURCHARGE.replace("x_from = 2.0", "x_from = 6.0"), "det"),
    "surcharge.x_to": (SURCHARGE, SURCHARGE.replace("x_to = 8.0", "x_to = 9.5"), "det"),
    "surcharge.q": (SURCHARGE, SURCHARGE.replace("q = 20.0", "q = 40.0"), "det"),
    "surcharge.q_end": (SURCHARGE, SURCHARGE.replace("q = 20.0", "q = 20.0\nq_end = 60.0"), "det"),
    "seismic.kh": (BASE, add("[seismic]\nkh = 0.1"), "det"),
    "tension_crack.depth": (CRACK, CRACK.replace("depth = 2.0", "depth = 3.0"), "det"),
    "tension_crack.water_filled": (CRACK, CRACK.replace("water_filled = true", "water_filled = false"), "det"),
    "tension_crack.fill": (CRACK, CRACK.replace("water_filled = true", "water_filled = true\nfill = 0.5"), "det"),
    "analysis.hypotheses": (NO_SU_RANDOM, sub('hypotheses = ["drained", "undrained"]', 'hypotheses = ["drained"]',
                                              NO_SU_RANDOM), "det"),
    "analysis.methods": (BASE, sub('methods = ["bishop", "spencer"]', 'methods = ["bishop", "janbu"]'), "det"),
    "analysis.method": (BASE, sub("slices = 8", 'slices = 8\nmethod = "spencer"'), "rel"),
    "analysis.slices": (BASE, sub("slices = 8", "slices = 12"), "det"),
    "analysis.interslice": (MP, MP.replace("slices = 8", 'slices = 8\ninterslice = "constant"'), "det"),
    "search.kind": (BASE, WINDOW, "det"),
    "search.trials": (BASE, sub("trials = 40", "trials = 250"), "det"),
    "search.x_range": (BASE, sub("trials = 40", "trials = 40\nx_range = [15.0, 30.0]"), "det"),
    "search.y_range": (BASE, sub("trials = 40", "trials = 40\ny_range = [12.0, 25.0]"), "det"),
    "search.entry": (WINDOW, WINDOW.replace("entry = [2.0, 10.0]", "entry = [5.0, 12.0]"), "det"),
    "search.exit": (WINDOW, WINDOW.replace("exit = [24.0, 32.0]", "exit = [22.0, 26.0]"), "det"),
    "search.min_depth": (BASE, sub("trials = 40", "trials = 40\nmin_depth = 3.0"), "det"),
    "search.circle": (FIXED, sub("trials = 40", 'kind = "fixed"\npolyline = [[5.0, 12.0], [18.0, 1.0], [32.0, 3.0]]'),
                      "det"),
    "search.circle.x": (FIXED, FIXED.replace("x = 18.0", "x = 19.0"), "det"),
    "search.circle.y": (FIXED, FIXED.replace("y = 18.0", "y = 19.0"), "det"),
    "search.circle.r": (FIXED, FIXED.replace("r = 17.0", "r = 18.5"), "det"),
    "search.polyline": (sub("trials = 40", 'kind = "fixed"\npolyline = [[5.0, 12.0], [18.0, 1.0], [32.0, 3.0]]'),
                        sub("trials = 40", 'kind = "fixed"\npolyline = [[5.0, 12.0], [18.0, 2.0], [32.0, 3.0]]'),
                        "det"),
    "search.block": (FAMILY, BLOCK, "det"),
    "search.block.zone": (BLOCK, BLOCK.replace('zone = "seam"', 'zone = "upper"'), "det"),
    "search.block.entry": (BLOCK, BLOCK.replace("entry = [10.0, 30.0]", "entry = [14.0, 30.0]"), "det"),
    "search.block.exit": (BLOCK, BLOCK.replace("exit = [45.0, 65.0]", "exit = [47.0, 60.0]"), "det"),
    "search.block.points": (BLOCK, BLOCK.replace("points = 4", "points = 5"), "det"),
    "search.block.lift": (BLOCK, BLOCK.replace("points = 4", "points = 4\nlift = 0.6"), "det"),
    "search.dynamic_programming": (FAMILY, DP, "det"),
    "search.dynamic_programming.columns": (DP, DP.replace("columns = 6", "columns = 8"), "det"),
    "search.dynamic_programming.nodes": (DP, DP.replace("nodes = 5", "nodes = 7"), "det"),
    "search.dynamic_programming.passes": (DP, DP.replace("passes = 1", "passes = 2"), "det"),
    "drilling.candidates": (DRILL, DRILL.replace("candidates = [20.0]", "candidates = [30.0]"), "drill"),
    "drilling.spacing": (DRILL, DRILL.replace("candidates = [20.0]", "candidates = [20.0]\nspacing = 3.0"), "drill"),
    "drilling.error_sd": (DRILL, DRILL.replace("candidates = [20.0]", "candidates = [20.0]\nerror_sd = 0.5"),
                          "drill"),
    "site_data.property": (SITE, SITE.replace('property = "clay.su"\nx = 30.0\nreadings = [[-1.0, 55.0]]',
                                              'property = "clay.c"\nx = 30.0\nreadings = [[-1.0, 14.0]]'), "sim"),
    "site_data.x": (SITE, SITE.replace("x = 30.0", "x = 14.0"), "sim"),
    "site_data.readings": (SITE, SITE.replace("[[-1.0, 55.0]]", "[[-1.0, 28.0]]"), "sim"),
    "site_data.points": (SITE_POINTS, SITE_POINTS.replace("55.0]]", "28.0]]"), "sim"),
    "site_data.file": (SITE_FILE, SITE_FILE.replace("walk_a.csv", "walk_b.csv"), "sim"),
    "site_data.error_sd": (SITE, SITE.replace("readings = [[-1.0, 55.0]]", "readings = [[-1.0, 55.0]]\nerror_sd = 8.0"),
                           "sim"),
    "site_data.error_cov": (SITE, SITE.replace("readings = [[-1.0, 55.0]]",
                                               "readings = [[-1.0, 55.0]]\nerror_cov = 0.2"), "sim"),
    # on by default (dynamic programming): "off" and another search of the registry each change the run
    "simulation.refine_search": (BASE, sub("batch = 3", 'batch = 3\nrefine_search = "off"'), "engine"),
    "random.material": (LAYERS, LAYERS.replace('material = "clay"\nproperty = "c"', 'material = "sand"\nproperty = "c"'),
                        "rel"),
    "random.property": (BASE, sub('property = "phi"', 'property = "unit_weight"').replace(
        'cov = 0.1\ntheta_h = 10.0\ntheta_v = 2.0', 'cov = 0.1\ntheta_h = "inf"\ntheta_v = "inf"'), "rel"),
    "random.distribution": (BASE, sub('property = "c"\ncov = 0.3', 'property = "c"\ndistribution = "gamma-less"'
                                      ).replace('"gamma-less"', '"truncated-normal"\nlower = 0.0').replace(
        "lower = 0.0", "lower = 0.0\ncov = 0.3", 1), "rel"),
    "random.mean": (BASE, sub('property = "c"\ncov = 0.3', 'property = "c"\ncov = 0.3\nmean = 10.0'), "rel"),
    "random.cov": (BASE, sub("cov = 0.3", "cov = 0.5"), "rel"),
    "random.lower": (BETA, BETA.replace("lower = 2.0", "lower = 5.0"), "rel"),
    "random.upper": (BETA, BETA.replace("upper = 20.0", "upper = 14.0"), "rel"),
    "random.mode": (TRIANGULAR, TRIANGULAR.replace("mode = 7.0", "mode = 10.0"), "rel"),
    "random.theta_h": (BASE, sub("theta_h = 10.0", "theta_h = 30.0"), "sim"),
    "random.theta_v": (BASE, sub("theta_v = 2.0", "theta_v = 6.0"), "sim"),
    "random.model": (BASE, sub('property = "c"\ncov = 0.3', 'property = "c"\ncov = 0.3\nmodel = "gaussian"'), "sim"),
    "random.nu": (MATERN, MATERN.replace('model = "matern"', 'model = "matern"\nnu = 0.5'), "sim"),
    "random.angle": (BASE, sub("theta_v = 2.0", "theta_v = 2.0\nangle = 20.0"), "sim"),
    "cross_correlation.between": (add(CROSS_BLOCK, UNIT_WEIGHT), add(CROSS_BLOCK, UNIT_WEIGHT).replace(
        '["clay.c", "clay.phi"]', '["clay.c", "clay.unit_weight"]'), "rel"),
    "cross_correlation.rho": (CROSS, CROSS.replace("rho = -0.5", "rho = 0.5"), "rel"),
    "simulation.realisations": (BASE, sub("realisations = 6", "realisations = 4"), "sim"),
    "simulation.seed": (BASE, sub("realisations = 6", "realisations = 6\nseed = 11"), "sim"),
    "simulation.cell": (BASE, sub("cell = 2.0", "cell = 1.0"), "sim"),
    "simulation.field_method": (BASE, sub("cell = 2.0", 'cell = 2.0\nfield_method = "spectral"'), "sim"),
    "simulation.averaging": (BASE, sub("cell = 2.0", 'cell = 2.0\naveraging = "midpoint"'), "sim"),
    "simulation.jobs": (BASE, sub("cell = 2.0", "cell = 2.0\njobs = 2"), "engine"),
    "simulation.batch": (BASE, sub("batch = 3", "batch = 5"), "engine"),
    "simulation.refine_below": (BASE, REFINE, "engine"),
    "simulation.estimator": (BASE, SUBSET, "engine"),
    "simulation.level_probability": (SUBSET, SUBSET.replace('estimator = "subset"',
                                                            'estimator = "subset"\nlevel_probability = 0.2'), "engine"),
    "simulation.samples_per_level": (SUBSET, SUBSET.replace('estimator = "subset"',
                                                            'estimator = "subset"\nsamples_per_level = 500'), "engine"),
    "simulation.refine_method": (REFINE, REFINE.replace("refine_below = 5.0",
                                                        'refine_below = 5.0\nrefine_method = "janbu"'), "engine"),
    "reliability.methods": (BASE, sub('methods = ["monte-carlo"]', 'methods = ["latin-hypercube"]'), "rel"),
    "reliability.samples": (BASE, sub("samples = 20", "samples = 30"), "rel"),
    "reliability.tornado_k": (BASE, sub("samples = 20", "samples = 20\ntornado_k = 1.0"), "rel"),
    "reliability.research_surface": (BASE, sub("samples = 20", "samples = 20\nresearch_surface = true"), "rel"),
    "sweep.theta_h": (BASE, sub('theta_h = [5.0, "inf"]', "theta_h = [5.0, 20.0]"), "engine"),
    "sweep.theta_v": (BASE, sub("theta_v = [1.0]", "theta_v = [1.0, 3.0]"), "engine"),
    "sweep.realisations": (BASE, sub("theta_v = [1.0]", "theta_v = [1.0]\nrealisations = 4"), "engine"),
    "risk.annual_exceedance": (BASE, sub("annual_exceedance = 0.01", "annual_exceedance = 0.05"), "risk"),
    "risk.annual_pf": (BASE, ANNUAL_PF, "risk"),
    "risk.consequence": (BASE, sub("consequence = 2.0", "consequence = 20.0"), "risk"),
    "risk.consequence_label": (BASE, sub("consequence = 2.0", 'consequence = 2.0\nconsequence_label = "cost"'),
                               "risk"),
    "risk.tolerability": (BASE, add(TOLERABILITY), "risk"),
    "risk.hypothesis": (BASE, add(RISK_HYPOTHESIS), "risk"),
    "risk.hypothesis.name": (add(RISK_HYPOTHESIS), add(RISK_HYPOTHESIS.replace('"drained"', '"undrained"')), "risk"),
    "risk.hypothesis.annual_probability": (add(RISK_HYPOTHESIS), add(RISK_HYPOTHESIS.replace("0.5", "0.2")), "risk"),
    "risk.hypothesis.condition": (add(RISK_HYPOTHESIS), add(RISK_HYPOTHESIS.replace("invented", "other")), "risk"),
    "risk.tolerability.label": (add(TOLERABILITY), add(TOLERABILITY.replace("line A", "line B")), "risk"),
    "risk.tolerability.source": (add(TOLERABILITY), add(TOLERABILITY.replace("invented", "other")), "risk"),
    "risk.tolerability.points": (add(TOLERABILITY), add(TOLERABILITY.replace("[100.0, 1e-5]", "[100.0, 1e-6]")),
                                 "risk"),
}


def schema_keys():
    """Every key path of the schema: ``table.key`` (nested tables spelt out)."""
    return {f"{table}.{key}" for table, keys in SCHEMA.items() for key in keys}


def test_walk_covers_the_whole_schema():
    assert set(WALK) == schema_keys()


def _case(text, tmp_path, name):
    for f, content in CSV_FILES.items():
        (tmp_path / f).write_text(content, encoding="utf-8")
    p = tmp_path / f"{name}.toml"
    p.write_text(text, encoding="utf-8")
    return load_case(p)


def _plain(v):
    """Comparable plain data (arrays, numbers rounded to 12 significant digits, NaN kept equal)."""
    if isinstance(v, dict):
        return {str(k): _plain(x) for k, x in v.items()}
    if isinstance(v, (list, tuple)):
        return [_plain(x) for x in v]
    if isinstance(v, np.ndarray):
        return _plain(v.tolist())
    if isinstance(v, (float, np.floating)):
        f = float(v)
        return "nan" if math.isnan(f) else float(f"{f:.12g}")
    if isinstance(v, (np.integer,)):
        return int(v)
    return v


def _det(case):
    from slipfield.slope.case.analyses import deterministic

    return {h: d["methods"] for h, d in deterministic(case).items()}


def probe_det(case, tmp_path):
    return _det(case)


def probe_rel(case, tmp_path):
    from slipfield.slope.case.analyses import deterministic, single_variable_reliability

    det = deterministic(case)
    return {h: (r["summary"] if r else None) for h in case.analysis["hypotheses"]
            for r in [single_variable_reliability(case, det, h)]}


def probe_sim(case, tmp_path):
    """The simulated FS of every hypothesis, through the ``simulate`` command (small sizes)."""
    from slipfield.slope.commands.simulate import simulate_case

    out = {}
    for h in case.analysis["hypotheses"]:
        r = simulate_case(case.path, tmp_path / f"sim-{h}-{len(list(tmp_path.iterdir()))}", hypothesis=h,
                          progress=False)
        out[h] = r["simulation"]
    return out


class _Stop(Exception):
    pass


def probe_engine(case, tmp_path, monkeypatch):
    """What the sweep and simulate commands hand the simulation engine (grid, realisations, seed, jobs,
    batch, refinement); the engine itself is stopped there (its results are checked by its own tests)."""
    import slipfield.slope.simulate as sim_pkg
    from slipfield.slope.commands.simulate import simulate_case
    from slipfield.slope.commands.sweep import sweep_case

    seen = {}

    def sweep_spy(prob, theta_h, theta_v, n, seed, **kw):
        refine = kw.get("refine")
        seen["sweep"] = dict(theta_h=list(theta_h), theta_v=list(theta_v), n=n, seed=seed,
                             jobs=kw.get("n_jobs"), batch=kw.get("batch"),
                             refine=None if refine is None else refine.describe())
        raise _Stop

    def simulate_spy(prob, n, seed, **kw):
        refine = kw.get("refine")
        seen["simulate"] = dict(n=n, seed=seed, jobs=kw.get("n_jobs"), batch=kw.get("batch"),
                                refine=None if refine is None else refine.describe())
        raise _Stop

    def subset_spy(prob, settings, seed, **kw):
        seen["subset"] = dict(settings=settings.describe(), seed=seed, jobs=kw.get("n_jobs"), batch=kw.get("batch"))
        raise _Stop

    import slipfield.slope.simulate.rare as rare

    monkeypatch.setattr(sim_pkg, "theta_sweep", sweep_spy)
    monkeypatch.setattr(sim_pkg, "simulate", simulate_spy)
    monkeypatch.setattr(rare, "subset_simulate", subset_spy)
    k = len(list(tmp_path.iterdir()))
    with pytest.raises(_Stop):
        sweep_case(case.path, tmp_path / f"sweep-{k}", progress=False)
    with pytest.raises(_Stop):
        simulate_case(case.path, tmp_path / f"simulate-{k}", progress=False)
    return seen


def probe_check(case, tmp_path, capsys=None):
    """What ``slipfield check`` tells the user (zone names among it)."""
    from slipfield.slope.cli import main

    assert main(["check", case.path]) == 0
    return capsys.readouterr().out.replace(case.path, "")


def probe_risk(case, tmp_path):
    """The points and lines of the risk chart (pf of the run given: the case's [risk] is what varies)."""
    from slipfield.slope.commands.risk import chart_points

    r = chart_points(case, [("drained", "spatial simulation", ("p",), 0.02, (0.01, 0.04)),
                            ("undrained", "spatial simulation", ("q",), 0.1, (0.05, 0.2))])
    return {"points": [p.to_json() for p in r["points"]], "lines": r["tolerability"], "given": r["given"],
            "label": r["consequence_label"]}


def probe_drill(case, tmp_path):
    """What ``slipfield run`` reports for [drilling], on each hypothesis's random problem."""
    from slipfield.slope.case.analyses import deterministic, random_problem
    from slipfield.slope.simulate.drilling import drilling_summary

    det = deterministic(case)
    return {h: drilling_summary(case.data["drilling"], random_problem(case, det, h))
            for h in case.analysis["hypotheses"]}


PROBES = {"det": probe_det, "rel": probe_rel, "sim": probe_sim, "risk": probe_risk, "drill": probe_drill}


_SEEN: dict = {}  # (probe, case text) -> probe output: a base shared by many keys is probed once


def _probe(name, text, tmp_path, monkeypatch, capsys):
    if (name, text) not in _SEEN:
        case = _case(text, tmp_path, f"case{len(_SEEN)}")
        if name == "engine":
            _SEEN[name, text] = probe_engine(case, tmp_path, monkeypatch)
        elif name == "check":
            _SEEN[name, text] = probe_check(case, tmp_path, capsys)
        else:
            _SEEN[name, text] = PROBES[name](case, tmp_path)
    return _plain(_SEEN[name, text])


@pytest.mark.parametrize("key", sorted(k for k, v in WALK.items() if v[2] != "written"))
def test_key_changes_the_run(key, tmp_path, monkeypatch, capsys):
    base, mutated, probe = WALK[key]
    assert base != mutated
    assert _probe(probe, base, tmp_path, monkeypatch, capsys) != _probe(probe, mutated, tmp_path, monkeypatch,
                                                                        capsys), key


def test_title_and_note_are_written(demo_run):
    """The written keys: the demo's title and note are in results.json and the report."""
    import tomllib

    out = demo_run("levee_soft_clay.toml")
    case = tomllib.loads((CASES / "levee_soft_clay.toml").read_text(encoding="utf-8"))["case"]
    doc = json.loads((out / "results.json").read_text(encoding="utf-8"))
    html = (out / "report.html").read_text(encoding="utf-8")
    assert doc["case"]["title"] == case["title"] and doc["case"]["note"] == case["note"]
    assert case["title"] in html and case["note"] in html

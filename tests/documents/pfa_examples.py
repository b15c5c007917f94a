"""Hand-written PFA documents for the tests: a logistic regression, a small tree ensemble, and a
document with user functions and named types. Forms and library functions as the PFA 0.8.1
specification defines them (model.reg.linear, m.link.logit, model.tree.simpleWalk, fcndef)."""

LOGISTIC_REGRESSION = {
    "name": "burst_logistic",
    "method": "map",
    "input": {"type": "record", "name": "Segment", "namespace": "brackwater.assets", "fields": [
        {"name": "segment_id", "type": "string"},
        {"name": "pipe_age_years", "type": "double"},
        {"name": "mean_pressure_kpa", "type": "double"},
    ]},
    "output": {"type": "record", "name": "BurstRisk", "namespace": "brackwater.scores",
               "fields": [{"name": "segment_id", "type": "string"},
                          {"name": "burst_probability", "type": "double"}]},
    "cells": {
        "model": {
            "type": {"type": "record", "name": "Coefficients", "fields": [
                {"name": "coeff", "type": {"type": "array", "items": "double"}},
                {"name": "const", "type": "double"}]},
            "init": {"coeff": [0.0246, 0.0038], "const": -5.07},
        },
    },
    "action": [
        {"let": {"x": {"type": {"type": "array", "items": "double"},
                       "new": ["input.pipe_age_years", "input.mean_pressure_kpa"]}}},
        {"type": "brackwater.scores.BurstRisk", "new": {
            "segment_id": "input.segment_id",
            "burst_probability": {"m.link.logit": {"model.reg.linear": ["x",
                                                                        {"cell": "model"}]}},
        }},
    ],
}

TREE_NODE = {
    "type": "record", "name": "TreeNode", "fields": [
        {"name": "field", "type": {"type": "enum", "name": "TreeFields",
                                   "symbols": ["pipe_age_years", "mean_pressure_kpa"]}},
        {"name": "operator", "type": "string"},
        {"name": "value", "type": "double"},
        {"name": "pass", "type": ["double", "TreeNode"]},
        {"name": "fail", "type": ["double", "TreeNode"]},
    ]}


def _stump(field, value, low, high):
    return {"field": field, "operator": "<", "value": value,
            "pass": {"double": low}, "fail": {"double": high}}


TREE_ENSEMBLE = {
    "input": {"type": "record", "name": "Segment", "fields": [
        {"name": "pipe_age_years", "type": "double"},
        {"name": "mean_pressure_kpa", "type": "double"}]},
    "output": "double",
    "cells": {
        "forest": {
            "type": {"type": "array", "items": TREE_NODE},
            "init": [
                {"field": "pipe_age_years", "operator": "<", "value": 40.0,
                 "pass": {"TreeNode": _stump("mean_pressure_kpa", 600.0, 0.01, 0.05)},
                 "fail": {"double": 0.12}},
                _stump("mean_pressure_kpa", 550.0, 0.02, 0.09),
                _stump("pipe_age_years", 60.0, 0.03, 0.15),
            ],
        },
    },
    "action": {"a.mean": {"a.map": [
        {"cell": "forest"},
        {"params": [{"tree": "TreeNode"}], "ret": "double",
         "do": {"model.tree.simpleWalk": [
             "input", "tree",
             {"params": [{"d": "Segment"}, {"t": "TreeNode"}], "ret": "boolean",
              "do": {"model.tree.simpleTest": ["d", "t"]}}]}},
    ]}},
}

USER_FUNCTIONS = {
    "name": "pressure_classes",
    "input": {"type": "record", "name": "Reading", "namespace": "brackwater.telemetry",
              "fields": [
                  {"name": "value", "type": "double"},
                  {"name": "unit", "type": {"type": "enum", "name": "PressureUnit",
                                            "symbols": ["KPA", "PSI"]}}]},
    "output": {"type": "record", "name": "Classified", "namespace": "brackwater.telemetry",
               "fields": [{"name": "kpa", "type": "double"},
                          {"name": "band", "type": {"type": "enum", "name": "Band",
                                                    "symbols": ["LOW", "NORMAL", "HIGH"]}}]},
    "cells": {"limits": {"type": {"type": "map", "values": "double"},
                         "init": {"low": 300.0, "high": 700.0}}},
    "pools": {"seen": {"type": "brackwater.telemetry.PressureUnit", "init": {}}},
    "fcns": {
        "to_kpa": {"params": [{"r": "brackwater.telemetry.Reading"}], "ret": "double",
                   "do": {"if": {"==": ["r.unit", {"type": "brackwater.telemetry.PressureUnit",
                                                   "value": "PSI"}]},
                          "then": {"*": ["r.value", 6.894757]}, "else": "r.value"}},
        "band_of": {"params": [{"kpa": "double"}],
                    "ret": "brackwater.telemetry.Band",
                    "do": {"if": {"<": ["kpa", {"cell": "limits", "path": [["low"]]}]},
                           "then": {"type": "brackwater.telemetry.Band", "value": "LOW"},
                           "else": {"type": "brackwater.telemetry.Band",
                                    "value": "NORMAL"}}},
    },
    "action": [
        {"let": {"kpa": {"u.to_kpa": ["input"]}}},
        {"type": "brackwater.telemetry.Classified",
         "new": {"kpa": "kpa", "band": {"u.band_of": ["kpa"]}}},
    ],
}

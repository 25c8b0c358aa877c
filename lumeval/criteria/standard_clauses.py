"""Per-sample clause kinds defined by a standard: the chromaticity quadrangles of ANSI
C78.377, MacAdam-type SDCM ellipses (IEC 60081 centres), and the design intents of ANSI/IES
TM-30-20 Annex E. Registered with :func:`lumeval.criteria.model.register_clause_kind` when the
package is imported (before the lot and range kinds, so that the kinds keep their order in
messages and documentation). Moved out of :mod:`lumeval.criteria.model`.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import ClassVar

import numpy as np

from ..errors import shown
from . import plausible, presets, regions
from .model import (
    ACCEPT_OUTSIDE_VALIDITY,
    ClauseKind,
    KeySpec,
    ParseError,
    boolean,
    display_name,
    figure_result,
    figure_unit,
    is_number,
    key_table,
    limit_text,
    number,
    register_clause_kind,
    string,
    suggest,
)
from .verdicts import ClauseResult, simple_outcomes

# --------------------------------------------------------------------------- ANSI quadrangle


@register_clause_kind
@dataclass(frozen=True)
class AnsiQuadrangleClause(ClauseKind):
    """Chromaticity inside the ANSI C78.377 quadrangle of a nominal CCT category (edition 2008 or 2017)."""

    KIND: ClassVar[str] = "ansi_quadrangle"
    TITLE: ClassVar[str] = "Inside an ANSI C78.377 nominal-CCT quadrangle (edition 2008 or 2017)"
    KEYS: ClassVar[dict[str, KeySpec]] = key_table(
        KeySpec(
            "nominal_cct",
            'one of 2200, 2500, 2700, 3000, 3500, 4000, 4500, 5000, 5700, 6500 (2008: 2700 … 6500), or "flexible"',
            "the nominal CCT category of the edition's Table 1",
            True,
        ),
        KeySpec("edition", f"{' or '.join(regions.ANSI_EDITIONS)} (default {regions.ANSI_DEFAULT_EDITION})",
                "the edition of ANSI C78.377 whose quadrangles are used"),
        KeySpec("target_cct_K", "number, 2200 … 7000 (2008: 2700 … 6500; only with nominal_cct = \"flexible\")", "target CCT of a flexible-CCT category"),
        KeySpec("tolerance_K", "number of kelvin ≥ 1, target ± tolerance within 1000 … 25000 K (only with nominal_cct = \"flexible\")", "CCT tolerance of a flexible category (default: the flexible-CCT formula)"),
    )

    nominal: int | None
    target_cct_K: float | None
    tolerance_K: float | None
    edition: str = regions.ANSI_DEFAULT_EDITION

    @classmethod
    def parse(cls, table: dict, common: dict) -> AnsiQuadrangleClause:
        ed_raw = table.get("edition", regions.ANSI_DEFAULT_EDITION)
        if isinstance(ed_raw, float) and ed_raw.is_integer():
            ed_raw = int(ed_raw)
        try:
            if isinstance(ed_raw, bool) or not isinstance(ed_raw, (int, str)):
                raise ValueError
            ed = regions.normalise_ansi_edition(ed_raw)
        except ValueError:
            raise ParseError("edition", f"{ed_raw!r} is not an encoded edition of ANSI C78.377",
                             f"write edition = {' or '.join(regions.ANSI_EDITIONS)}") from None
        name = regions.ansi_edition_name(ed)
        table_1 = regions.ansi_table(ed)
        nom = table.get("nominal_cct")
        allowed = ", ".join(str(k) for k in table_1) + ', "flexible"'
        if nom is None:
            raise ParseError(None, "an ansi_quadrangle clause needs `nominal_cct`", f"add nominal_cct = one of {allowed}")
        tgt, tol = number(table, "target_cct_K"), number(table, "tolerance_K", positive=True, allow_zero=False)
        if isinstance(nom, str) and nom.lower() == "flexible":
            if tgt is None:
                raise ParseError(None, 'nominal_cct = "flexible" needs `target_cct_K`', "add target_cct_K = e.g. 3800")
            lo, hi = regions.ANSI_FLEXIBLE_RANGES_K[ed]
            if not lo <= tgt <= hi:
                raise ParseError("target_cct_K", f"{tgt:g} K is outside the flexible range {lo:.0f}-{hi:.0f} K of {name}",
                                 plausible.kelvin_fix("target_cct_K", tgt, lambda w: lo <= w <= hi) + f"write a value between {lo:.0f} and {hi:.0f}")
            if tol is not None:
                from ..metrics.colorimetry import CCT_MAX_K, CCT_MIN_K

                # the quadrangle's isotemperature edges must be CCTs lumeval computes, and the
                # band must be wider than the 1 K resolution of a CCT
                if tol < 1.0 or not CCT_MIN_K <= tgt - tol < tgt + tol <= CCT_MAX_K:
                    top = min(tgt - CCT_MIN_K, CCT_MAX_K - tgt)
                    raise ParseError("tolerance_K", f"{tol:g} K leaves a CCT band of {tgt - tol:g} to {tgt + tol:g} K; "
                                     f"the band must lie within {CCT_MIN_K:.0f}-{CCT_MAX_K:.0f} K",
                                     f"write a tolerance from 1 to {top:.0f} K (or leave it out for the flexible-CCT formula)")
            label = common["label"] or f"inside {name} flexible {tgt:.0f} K quadrangle"
            return cls(common["id"], label, common["note"], common["line"], None, tgt, tol, ed)
        if isinstance(nom, str):
            raise ParseError("nominal_cct", *plausible.quoted_category(nom, table_1, allowed))
        # the categories are int keys: 3000.0 finds 3000 without a float() that a huge integer overflows
        if not (is_number(nom) and nom in table_1):
            other = [e for e in regions.ANSI_EDITIONS if e != ed and is_number(nom) and nom in regions.ansi_table(e)]
            hint = f" (it is one of edition {other[0]})" if other else ""
            fix = "" if other or not is_number(nom) else plausible.kelvin_fix("nominal_cct", nom, lambda w: w in table_1)
            raise ParseError("nominal_cct", f"{shown(nom)} is not a nominal CCT category of {name}{hint}", f"{fix}allowed: {allowed}")
        for k in ("target_cct_K", "tolerance_K"):
            if k in table:
                raise ParseError(k, f"`{k}` applies only to a flexible category", 'remove it, or set nominal_cct = "flexible"')
        label = common["label"] or f"inside {name} {int(nom)} K quadrangle"
        return cls(common["id"], label, common["note"], common["line"], int(nom), None, None, ed)

    @property
    def quadrangle(self) -> regions.Quadrangle:
        if self.nominal is not None:
            return regions.ansi_quadrangle(self.nominal, self.edition)
        assert self.target_cct_K is not None  # parse() requires it for a flexible category
        return regions.ansi_flexible_quadrangle(self.target_cct_K, self.tolerance_K, self.edition)

    def evaluate(self, ev) -> tuple[ClauseResult, ...]:
        q = self.quadrangle
        upvp = np.stack([np.asarray(ev.u_prime, float), np.asarray(ev.v_prime, float)], axis=-1)
        margin = q.margin(upvp)
        outcome, reason = simple_outcomes(margin)
        cct, duv = np.asarray(ev.cct_K, float), np.asarray(ev.duv, float)
        lo, hi = q.cct_range_K
        # the edition and how the corners were obtained travel in the limit text, so every
        # report (terminal, JSON "limit", CSV, HTML) names them whatever the clause's label
        lim = f"{regions.ansi_edition_name(self.edition)}, {q.corners_text}: CCT {lo:.0f}–{hi:.0f} K, Duv target ± {regions.ANSI_DUV_TOLERANCE}"
        return (
            ClauseResult(
                clause_id=self.clause_id,
                label=self.label,
                kind=self.KIND,
                figure="u'v'",
                unit="Δu'v'",
                measured=margin,
                lower=0.0,
                upper=None,
                limit_text=lim,
                margin=margin,
                outcome=outcome,
                details={"cct_K": cct, "duv": duv, "u_prime": upvp[:, 0], "v_prime": upvp[:, 1], "delta_upvp": margin},
                reason=reason,
                source=q.source,
                group=self.clause_id,
                line=self.line,
            ),
        )

    def tender_text(self) -> str:
        q = self.quadrangle
        lo, hi = q.cct_range_K
        name = regions.ansi_edition_name(self.edition)
        if self.nominal is not None:
            cat = regions.ansi_table(self.edition)[self.nominal]
            what = (
                f"the quadrangle of the {self.nominal} K nominal CCT category of {name} (Table 1: target CCT "
                f"{cat.target_cct_K:.0f} ± {cat.tolerance_K:.0f} K, i.e. {lo:.0f} K to {hi:.0f} K, target Duv "
                f"{cat.target_duv:+.4f} ± 0.006)"
            )
        else:  # "quadrangle" once (a review found "the quadrangle of the … flexible-CCT quadrangle")
            what = f"the {name} flexible-CCT quadrangle for {self.target_cct_K:.0f} K (CCT {lo:.0f}–{hi:.0f} K)"
        if q.corners_origin == "published":
            xy = q.corners_xy
            corners = "; ".join(f"({x:.4f}, {y:.4f})" for x, y in xy)
            how = f"with the corners published in that edition, CIE 1931 (x, y) = {corners}"
        elif self.edition == "2008":
            how = (f"with corners at CCT {lo:.0f} K and {hi:.0f} K and Duv equal to the edition's flexible-CCT "
                   f"target at the target CCT ± 0.006")
        else:
            how = (f"with corners at CCT {lo:.0f} K and {hi:.0f} K and Duv equal to the standard's flexible-CCT "
                   f"target at each edge ± 0.006")
        return f"The chromaticity shall lie inside {what}, {how}."

    def sources(self) -> tuple[str, ...]:
        return (self.quadrangle.source, "Ohno (2014) LEUKOS 10(1):47-55 for CCT/Duv")


# --------------------------------------------------------------------------- SDCM ellipse


@register_clause_kind
@dataclass(frozen=True)
class SdcmClause(ClauseKind):
    """Chromaticity within n steps (SDCM) of a colour-matching ellipse."""

    KIND: ClassVar[str] = "sdcm"
    TITLE: ClassVar[str] = "Within n steps of an SDCM (MacAdam-type) ellipse"
    KEYS: ClassVar[dict[str, KeySpec]] = key_table(
        KeySpec("max_steps", "positive number", "largest acceptable number of steps from the centre", True),
        KeySpec("centre", '"F6500", "F5000", "F4000", "F3500", "F3000" or "F2700"', "an IEC 60081 colour centre with its ellipse"),
        KeySpec("macadam1942", "integer 1 … 25", "one of MacAdam's (1942) 25 ellipses (Wyszecki & Stiles Table 2(5.4.1))"),
        KeySpec("centre_xy", "array of two numbers [x, y]", "your own centre (CIE 1931 x, y); needs g11, g12, g22"),
        KeySpec("g11", "number", "coefficient of Δx² of your 1-step ellipse"),
        KeySpec("g12", "number", "coefficient of Δx·Δy (the form is g11 Δx² + 2 g12 Δx Δy + g22 Δy²)"),
        KeySpec("g22", "number", "coefficient of Δy² of your 1-step ellipse"),
    )

    ellipse: regions.SdcmEllipse
    max_steps: float

    @classmethod
    def parse(cls, table: dict, common: dict) -> SdcmClause:
        steps = number(table, "max_steps", positive=True, allow_zero=False)
        if steps is None:
            raise ParseError(None, "an sdcm clause needs `max_steps`", "add max_steps = e.g. 3")
        given = [k for k in ("centre", "macadam1942", "centre_xy") if k in table]
        if len(given) != 1:
            raise ParseError(
                given[1] if len(given) > 1 else None,
                "give exactly one of `centre`, `macadam1942` or `centre_xy`" + (f" (found {', '.join(given)})" if given else ""),
                'e.g. centre = "F3000", or centre_xy = [0.44, 0.40] with g11, g12, g22',
            )
        gkeys = [k for k in ("g11", "g12", "g22") if k in table]
        if given[0] != "centre_xy" and gkeys:
            raise ParseError(gkeys[0], f"`{gkeys[0]}` applies only with `centre_xy`", "remove it, or give your own centre_xy")
        if given[0] == "centre":
            c = string(table, "centre")
            if c is None or c not in regions.IEC60081_CENTRES:
                s = suggest(c or "", regions.IEC60081_CENTRES)
                hint = f"did you mean {s!r}? " if s else ""
                raise ParseError("centre", f"unknown centre {c!r}", f"{hint}allowed: {', '.join(regions.IEC60081_CENTRES)}")
            ell = regions.iec60081_ellipse(c)
        elif given[0] == "macadam1942":
            k = table["macadam1942"]
            if not (isinstance(k, int) and not isinstance(k, bool) and 1 <= k <= 25):
                raise ParseError("macadam1942", f"must be an integer from 1 to 25, got {k!r}", "pick an ellipse number from Wyszecki & Stiles Table 2(5.4.1)")
            ell = regions.macadam1942_ellipse(k)
        else:
            c = table["centre_xy"]
            if not (isinstance(c, list) and len(c) == 2 and all(is_number(v) for v in c) and all(0 < v < 1 for v in c)):
                raise ParseError("centre_xy", f"must be [x, y] with 0 < x, y < 1, got {shown(c)}", "write e.g. centre_xy = [0.4338, 0.4030]")
            if len(gkeys) != 3:
                missing = [k for k in ("g11", "g12", "g22") if k not in table]
                raise ParseError(None, f"centre_xy needs the ellipse coefficients; missing {', '.join(missing)}", "add g11, g12 and g22 of your 1-step ellipse")
            g11, g12, g22 = (number(table, k) for k in ("g11", "g12", "g22"))
            assert g11 is not None and g12 is not None and g22 is not None  # all three are given (above)
            ell = regions.SdcmEllipse(f"user ellipse at ({c[0]}, {c[1]})", np.array(c, float), g11, g12, g22, "user-given centre and coefficients")
            if not ell.is_positive_definite:
                raise ParseError("g11", "g11, g12, g22 do not describe an ellipse (need g11 > 0, g22 > 0, g11·g22 > g12²)", "check the coefficients and their signs")
        label = common["label"] or f"within {steps:g} SDCM steps of {ell.name}"
        return cls(common["id"], label, common["note"], common["line"], ell, steps)

    def evaluate(self, ev) -> tuple[ClauseResult, ...]:
        xy = np.stack([np.asarray(ev.x, float), np.asarray(ev.y, float)], axis=-1)
        st = self.ellipse.steps(xy)
        margin = self.max_steps - st
        outcome, reason = simple_outcomes(margin)
        d = self.ellipse.margin_upvp(xy, self.max_steps)
        return (
            ClauseResult(
                clause_id=self.clause_id,
                label=self.label,
                kind=self.KIND,
                figure="SDCM steps",
                unit="steps",
                measured=st,
                lower=None,
                upper=float(self.max_steps),
                limit_text=f"≤ {self.max_steps:g} steps; centre x, y = {self.ellipse.centre_xy[0]:.4f}, {self.ellipse.centre_xy[1]:.4f}",
                margin=margin,
                outcome=outcome,
                details={"steps": st, "delta_upvp": d, "x": xy[:, 0], "y": xy[:, 1]},
                reason=reason,
                source=self.ellipse.source,
                group=self.clause_id,
                line=self.line,
            ),
        )

    def tender_text(self) -> str:
        e = self.ellipse  # a user ellipse's name holds its centre, which the text gives (said twice before)
        return (
            f"The chromaticity shall lie within {self.max_steps:g} steps (standard deviations of colour matching, SDCM) "
            f"of {'the ellipse' if e.name.startswith('user ellipse') else e.name} centred at x = {e.centre_xy[0]:.4f}, y = {e.centre_xy[1]:.4f} (CIE 1931), steps computed as "
            f"√(g11 Δx² + 2 g12 Δx Δy + g22 Δy²) with g11 = {e.g11:.4g}, g12 = {e.g12:.4g}, g22 = {e.g22:.4g}."
        )

    def sources(self) -> tuple[str, ...]:
        return (self.ellipse.source,)


# --------------------------------------------------------------------------- TM-30 Annex E


@register_clause_kind
@dataclass(frozen=True)
class Tm30DesignIntentClause(ClauseKind):
    """ANSI/IES TM-30-20 Annex E design-intent priority level (P1-P3, V1-V3, F1-F3)."""

    KIND: ClassVar[str] = "tm30_design_intent"
    TITLE: ClassVar[str] = "ANSI/IES TM-30-20 Annex E design-intent level"
    KEYS: ClassVar[dict[str, KeySpec]] = key_table(
        KeySpec("level", ", ".join(f'"{k}"' for k in presets.LEVELS), "the design intent (Preference, Vividness, Fidelity) and priority level", True),
        ACCEPT_OUTSIDE_VALIDITY,
    )

    level: str
    accept_outside_validity: bool = False

    @classmethod
    def parse(cls, table: dict, common: dict) -> Tm30DesignIntentClause:
        lv = table.get("level")
        if lv is None:
            raise ParseError(None, "a tm30_design_intent clause needs `level`", f"add level = one of {', '.join(presets.LEVELS)}")
        if not isinstance(lv, str) or lv not in presets.TM30_ANNEX_E:
            s = suggest(str(lv), presets.LEVELS, cutoff=0.4)
            hint = f"did you mean {s!r}? " if s else ""
            raise ParseError("level", f"unknown design-intent level {lv!r}", f"{hint}allowed: {', '.join(presets.LEVELS)}")
        label = common["label"] or f"TM-30 Annex E {presets.level_title(lv)}"
        return cls(common["id"], label, common["note"], common["line"], lv, boolean(table, ACCEPT_OUTSIDE_VALIDITY.name))

    def evaluate(self, ev) -> tuple[ClauseResult, ...]:
        out = []
        for c in presets.effective_conditions(self.level):
            unit = figure_unit(c.figure)
            out.append(
                figure_result(
                    ev,
                    clause_id=f"{self.clause_id}:{c.figure}",
                    label=f"{self.level}: {display_name(c.figure)} {limit_text(c.lower, c.upper, unit)}",
                    kind=self.KIND,
                    figure=c.figure,
                    lower=c.lower,
                    upper=c.upper,
                    source=presets.TM30_ANNEX_E_SOURCE,
                    group=self.clause_id,
                    line=self.line,
                    accept_outside_validity=self.accept_outside_validity,
                )
            )
        return tuple(out)

    def tender_text(self) -> str:
        parts = []
        for c in presets.effective_conditions(self.level):
            parts.append(f"{display_name(c.figure)} {limit_text(c.lower, c.upper, figure_unit(c.figure))}")
        return (
            f"The light source shall meet ANSI/IES TM-30-20 Annex E, {presets.level_title(self.level)}: "
            + "; ".join(parts)
            + " (Rf, Rg and hue-bin values per ANSI/IES TM-30-20; Rcs,h1 in percent)."
        )

    def sources(self) -> tuple[str, ...]:
        return ("ANSI/IES TM-30-20 Annex E",)

"""What a check's target rests on, the project defaults, and a site's own target settings.

The project defaults are our own choices (common practice, not published limits); a site may
set each one in its ``site.toml`` ``[targets]`` table (validated in
:mod:`audit_lib.site.schema`, documented in ``docs/site-format.md`` and
``docs/time-and-targets.md``). A check on a value the site set says so: its basis is
:data:`SITE_SETTING` and its source names the setting and the default it replaces.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from audit_lib.judge.zones import Zone

#: What a check's target rests on (``Check.basis``): a published value (read in its source),
#: a project default (our own choice, common practice), a value recalled but not read in its
#: source, or a value the site set in its ``[targets]`` table instead of the project default.
PUBLISHED, PROJECT_DEFAULT, FROM_MEMORY = "published", "project default", "from memory"
SITE_SETTING = "site setting"
BASES = (PUBLISHED, PROJECT_DEFAULT, FROM_MEMORY, SITE_SETTING)

#: Defaults that rest on common practice, not on a published limit; a site may change each in
#: its ``[targets]`` table (:class:`TargetSettings`). The keeper's limit itself (30 J m-2 a day,
#: ICNIRP 2004) is published; the time a keeper spends near a lamp is ours.
REFUGE_UVI_MAX = 0.5  # a place counts as low-UV refuge at or below this UV Index [-]
REFUGE_MIN_SHARE = 0.25  # refuge share of the floor area [-]
LIGHT_HOURS_RANGE = (10.0, 14.0)  # hours of light a day [h]
KEEPER_TIME_S = 1800.0  # keeper's time a day at the working distance [s]
SHORT_UVB_TOLERANCE = 0.001  # allowed 280-290 nm share of UVB above sunlight's [-]
COMMON_PRACTICE = "common practice (project default, set per site)"
#: Where a site's own target values are given (named in every check that uses one).
SITE_TARGETS_TABLE = "site.toml [targets]"

@dataclass(frozen=True)
class TargetSettings:
    """The targets a site may set instead of the project defaults (``[targets]`` table).

    Attributes
    ----------
    refuge_uvi_max : float
        A place counts as low-UV refuge at or below this UV Index [-].
    refuge_min_share : float
        Smallest acceptable refuge share of the floor [-].
    light_hours_min, light_hours_max : float
        Target hours of light a day [h].
    short_uvb_tolerance : float
        280-290 nm share of UVB allowed above sunlight's [-].
    keeper_time_s : float
        Keeper's daily time at the working distance [s].
    overridden : frozenset of str
        Names of the fields the site set (their checks' basis is :data:`SITE_SETTING`).
    """

    refuge_uvi_max: float = REFUGE_UVI_MAX
    refuge_min_share: float = REFUGE_MIN_SHARE
    light_hours_min: float = LIGHT_HOURS_RANGE[0]
    light_hours_max: float = LIGHT_HOURS_RANGE[1]
    short_uvb_tolerance: float = SHORT_UVB_TOLERANCE
    keeper_time_s: float = KEEPER_TIME_S
    overridden: frozenset = frozenset()

    @classmethod
    def from_record(cls, record) -> TargetSettings:
        """Settings from a site's ``[targets]`` record (None: the project defaults)."""
        if record is None:
            return cls()
        given = frozenset(record.model_fields_set)
        return cls(**{k: getattr(record, k) for k in given}, overridden=given)

    @property
    def light_hours_range(self) -> tuple[float, float]:
        """(min, max) hours of light a day [h]."""
        return (self.light_hours_min, self.light_hours_max)

    def assess_kwargs(self) -> dict:
        """Keyword arguments of :func:`audit_lib.judge.verdicts.assess_enclosure`."""
        return {"refuge_min_share": self.refuge_min_share,
                "refuge_uvi_max": self.refuge_uvi_max,
                "light_hours_range": self.light_hours_range,
                "short_uvb_tolerance": self.short_uvb_tolerance,
                "keeper_time_s": self.keeper_time_s}

    def changed(self) -> list[str]:
        """One phrase per overridden target for the report.

        For example ``"refuge_min_share = 0.3 (project default 0.25)"``.
        """
        defaults = TargetSettings()
        return [f"{k} = {getattr(self, k):g} (project default {getattr(defaults, k):g})"
                for k in sorted(self.overridden)]


def zone_basis(zone: Zone) -> str:
    """Basis of a check on a zone's ranges: published once read in the paper, else from memory."""
    return PUBLISHED if zone.status == "read" else FROM_MEMORY


def setting_basis(settings: dict) -> tuple[str, str]:
    """Basis of a check on project defaults, and the words naming any site setting.

    Parameters
    ----------
    settings : dict of str to (float, float)
        Setting name to (value used, project default).

    Returns
    -------
    (str, str)
        :data:`PROJECT_DEFAULT` and ``""`` when every value is the default; otherwise
        :data:`SITE_SETTING` and e.g. ``"site.toml [targets] refuge_min_share = 0.3 (project
        default 0.25)"``.
    """
    changed = [f"{k} = {v:g} (project default {d:g})" for k, (v, d) in settings.items()
               if not math.isclose(float(v), float(d), rel_tol=1e-12, abs_tol=0.0)]
    if not changed:
        return PROJECT_DEFAULT, ""
    return SITE_SETTING, f"{SITE_TARGETS_TABLE} " + ", ".join(changed)

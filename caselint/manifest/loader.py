"""Read a case file into a :class:`~caselint.manifest.case.Case`: YAML, schema, units, paths.

The steps: parse the YAML keeping lines (:mod:`.yamlnodes`), check the format version,
validate against the JSON Schema (:mod:`.schema`), convert quantities to SI
(:mod:`.units`), check what a schema cannot (positive sizes, consistent fluid data,
regions named once, mesh files that exist). The mesh itself is not read here.

Every problem is a :class:`~caselint.errors.CaseFileError` with file, line, key and what
was expected, and all found in one run are raised together, so a case file with several
mistakes is fixed in one pass: duplicate keys, schema problems and the problems of the
later checks. A YAML syntax error or a format version this caselint does not read stops
at once (nothing after it can be read reliably), and a top-level section with a schema
problem is not checked further (its values are not what the later checks expect).
"""

from __future__ import annotations

import copy
import datetime as _dt
import math
import re
from collections.abc import Mapping
from pathlib import Path
from typing import Any, Callable

from caselint.errors import CaseFileError, CaseFileErrors
from caselint.manifest.case import (
    METHOD_ALIASES, RENAMED_VALUES, SCHEME_INTEGRATION, Case, CaseInfo, Checks, Flow, Fluid,
    GridStudy, MeshSpec, Physics, Region, Review, TimeSpec, Turbulence, Waiver,
)
from caselint.manifest.messages import describe
from caselint.manifest.schema import case_schema, schema_problems
from caselint.manifest.units import scale_to_m
from caselint.manifest.values import ValueReader, collects
from caselint.manifest.yamlnodes import YamlDoc, load_yaml

#: The case-file format version this loader reads.
FORMAT_VERSION = 1
#: Largest relative disagreement allowed between kinematic_viscosity and viscosity/density.
FLUID_CONSISTENCY = 0.01


def load_case(path: str | Path, *, extensions: Mapping[str, dict] | None = None,
              quantities: Mapping[str, Mapping[str, str]] | None = None) -> Case:
    """Load and validate a case file; ``extensions`` maps plugin sections to schema fragments.

    ``quantities`` maps a plugin section to its quantities (dotted key in the section ->
    dimension name), which are converted to SI like the case file's own.

    :raises CaseFileError: every problem found (a :class:`CaseFileErrors` when several).
    """
    case_path = Path(path)
    doc = load_yaml(case_path, keep_problems=True)
    _check_version(doc)
    _check_renamed(doc)
    data, problems = schema_problems(doc, case_schema(extensions))
    problems = [*doc.problems, *problems]
    broken = {_section(p.key) for p in problems}
    builder = _CaseBuilder(case_path, doc, skip=broken)   # problems there: no Case is built
    case = builder.build(data, extensions or {}, quantities or {})
    problems += builder.problems
    if problems or case is None:
        raise CaseFileErrors.of(problems)
    return case


def _section(key: str) -> str:
    """The top-level section of a key path: ``physics`` of ``physics.fluid.density``."""
    return re.split(r"[.\[]", key, maxsplit=1)[0]


def _check_version(doc: YamlDoc) -> None:
    """A clearer message than the schema's for a format this caselint does not read."""
    if "caselint" not in doc.data:
        return                       # the schema reports the missing key
    version = doc.data["caselint"]
    if type(version) is int and version == FORMAT_VERSION:
        return
    if type(version) is int:
        message = (f"case-file format version {version} is not supported; "
                   f"this caselint reads version {FORMAT_VERSION} (caselint: {FORMAT_VERSION})")
    else:
        message = (f"expected the case-file format version {FORMAT_VERSION} "
                   f"(caselint: {FORMAT_VERSION}), got {describe(version)}")
    raise CaseFileError(doc.file, message, line=doc.line_of("caselint"),
                        column=doc.column_of("caselint"), key="caselint")


def _check_renamed(doc: YamlDoc) -> None:
    """A value an earlier format spelt differently names its new spelling (exit 2)."""
    data = doc.data if isinstance(doc.data, dict) else {}
    found: list[tuple[str, str, Any]] = []
    mesh = data.get("mesh")
    boundaries = mesh.get("boundaries") if isinstance(mesh, dict) else None
    for name, role in (boundaries.items() if isinstance(boundaries, dict) else ()):
        if isinstance(role, dict):
            found.append(("boundary role", f"mesh.boundaries.{name}.type", role.get("type")))
        else:
            found.append(("boundary role", f"mesh.boundaries.{name}", role))
    physics = data.get("physics")
    turbulence = physics.get("turbulence") if isinstance(physics, dict) else None
    if isinstance(turbulence, dict):
        found.append(("turbulence model", "physics.turbulence.model", turbulence.get("model")))
    for what, key, value in found:
        for kind, old, new in RENAMED_VALUES:
            if kind == what and value == old:
                raise CaseFileError(doc.file, f"the {what} '{old}' is now called '{new}'; "
                                    f"write {new}", line=doc.line_of(key),
                                    column=doc.column_of(key), key=key)


class _CaseBuilder(ValueReader):
    """Turns validated case-file data into a Case, pointing any error at its line."""

    def __init__(self, case_path: Path, doc: YamlDoc, skip: set[str] = frozenset()) -> None:
        super().__init__(case_path, doc)
        self.skip = skip             # top-level sections with schema problems

    # -- sections ----------------------------------------------------------------------

    def build(self, data: dict[str, Any], extensions: Mapping[str, dict],
              quantities: Mapping[str, Mapping[str, str]]) -> Case | None:
        """The Case, or None when a problem was found (each is kept in ``problems``).

        A top-level section with a schema problem, or a required one that is missing, is
        left out: its values are not what the steps below expect. The others are checked.
        """
        def section(name: str) -> Any:
            if name in self.skip or (name in ("case", "mesh") and name not in data):
                return None
            return data.get(name, {})

        regions_spec, physics_spec = section("regions"), section("physics")
        regions = self.regions(regions_spec or [])
        # the checks of waiver regions and of the up direction need what they refer to
        region_names = None if regions_spec is None else {r.name for r in regions}
        direction = (physics_spec or {}).get("flow", {}).get("direction")
        steps: dict[str, Callable[[Any], Any]] = {
            "mesh": self.mesh, "physics": self.physics, "time": self.time,
            "grid_study": self.grid_study, "review": self.review,
            "checks": lambda spec: self.checks(spec, region_names),
            "domain": lambda spec: self.domain(spec, direction),
        }
        built = {name: step(spec) for name, step in steps.items()
                 if (spec := section(name)) is not None}
        if self.problems or self.skip or len(built) < len(steps):
            return None
        return Case(
            path=self.case_path,
            version=data["caselint"],
            info=CaseInfo(**data["case"]),
            regions=regions,
            extensions={name: self.section(name, data[name], quantities.get(name, {}))
                        for name in sorted(extensions) if name in data},
            document=data,
            lines=dict(self.doc.lines),
            **built,
        )

    def grid_study(self, spec: dict[str, Any]) -> GridStudy:
        return GridStudy(tuple(self.mesh_file(m, f"grid_study.meshes[{i}]")
                               for i, m in enumerate(spec.get("meshes", []))))

    def section(self, name: str, data: Any, quantities: Mapping[str, str]) -> Any:
        """A plugin section's data with its declared quantities in SI (the rest as written)."""
        if not quantities or not isinstance(data, dict):
            return data
        out = copy.deepcopy(data)
        for key, dimension in sorted(quantities.items()):
            *parents, last = key.split(".")
            holder = out
            for part in parents:
                holder = holder.get(part) if isinstance(holder, dict) else None
            if isinstance(holder, dict) and last in holder:
                path = ".".join([name, *parents])
                holder[last] = self.quantity(holder, last, dimension, path, positive=False)
        return out

    def mesh(self, spec: dict[str, Any]) -> MeshSpec:
        units = spec.get("units", "m")
        boundaries = {name: (role if isinstance(role, str) else role["type"])
                      for name, role in spec.get("boundaries", {}).items()}
        return MeshSpec(
            file=self.mesh_file(spec["file"], "mesh.file"),
            units=units,
            scale_to_m=scale_to_m(units),
            boundaries=boundaries,
            tag_array=spec.get("tag_array"),
            tags={int(tag): name for tag, name in spec.get("tags", {}).items()},
            velocity_field=spec.get("velocity_field"),
            zone=None if spec.get("zone") is None else str(spec["zone"]),
        )

    def physics(self, spec: dict[str, Any]) -> Physics:
        fluid_spec = spec.get("fluid", {})
        p = "physics.fluid"
        fluid = Fluid(
            density=self.quantity(fluid_spec, "density", "density", p),
            viscosity=self.quantity(fluid_spec, "viscosity", "dynamic_viscosity", p),
            kinematic_viscosity=self.quantity(
                fluid_spec, "kinematic_viscosity", "kinematic_viscosity", p),
            sound_speed=self.quantity(fluid_spec, "sound_speed", "velocity", p),
            thermal_diffusivity=self.quantity(fluid_spec, "thermal_diffusivity", "diffusivity", p),
        )
        self.check_fluid(fluid)
        flow_spec = spec.get("flow", {})
        p = "physics.flow"
        flow = Flow(
            kind=flow_spec.get("kind"),
            velocity=self.quantity(flow_spec, "velocity", "velocity", p),
            direction=(self.direction(flow_spec["direction"], f"{p}.direction")
                       if "direction" in flow_spec else None),
            length=self.quantity(flow_spec, "length", "length", p),
            leading_edge=(self.point(flow_spec["leading_edge"], f"{p}.leading_edge")
                          if "leading_edge" in flow_spec else None),
            strouhal=self.finite(flow_spec, "strouhal", p),
        )
        turbulence = Turbulence(**spec["turbulence"]) if "turbulence" in spec else Turbulence()
        method = spec.get("method", "cell-centred")
        return Physics(method=METHOD_ALIASES.get(method, method), fluid=fluid, flow=flow,
                       turbulence=turbulence, compressible=spec.get("compressible", False))

    @collects
    def check_fluid(self, fluid: Fluid) -> None:
        """Viscosity, density and kinematic viscosity, when all given, must agree."""
        if fluid.density is None or fluid.viscosity is None or fluid.kinematic_viscosity is None:
            return
        derived = fluid.viscosity / fluid.density
        mismatch = abs(derived - fluid.kinematic_viscosity) / fluid.kinematic_viscosity
        if mismatch > FLUID_CONSISTENCY:
            raise self.fail(
                "physics.fluid.kinematic_viscosity",
                f"kinematic_viscosity {fluid.kinematic_viscosity:.4g} m^2/s disagrees with "
                f"viscosity / density = {derived:.4g} m^2/s by {100 * mismatch:.1f} % "
                f"(at most {100 * FLUID_CONSISTENCY:g} % allowed); give one or make them agree")

    def time(self, spec: dict[str, Any]) -> TimeSpec:
        step = self.quantity(spec, "step", "time", "time")
        end = self.quantity(spec, "end", "time", "time")
        if step is not None and end is not None and end < step:
            self.problem("time.end", f"the end time {end:g} s is shorter than one time step "
                                     f"({step:g} s)")
        integration, scheme = spec.get("integration"), spec.get("scheme")
        if integration is not None and scheme is not None \
                and SCHEME_INTEGRATION[scheme] != integration:
            self.problem("time.scheme", f"the scheme {scheme} is {SCHEME_INTEGRATION[scheme]}, "
                                        f"but time.integration says {integration}; make them "
                                        "agree or leave one out")
        return TimeSpec(
            mode=spec.get("mode", "steady"),
            step=step,
            end=end,
            integration=integration,
            scheme=scheme,
            output_interval=self.quantity(spec, "output_interval", "time", "time"),
            frequency=self.quantity(spec, "frequency", "frequency", "time"),
            advection_scheme=spec.get("advection_scheme"),
        )

    def regions(self, specs: list[dict[str, Any]]) -> tuple[Region, ...]:
        out: list[Region] = []
        first: dict[str, int] = {}
        for i, spec in enumerate(specs):
            path = f"regions[{i}]"
            name = spec["name"]
            if name in first:
                self.problem(f"{path}.name", f"region name '{name}' is used twice "
                                             f"(also regions[{first[name]}])")
                continue
            first[name] = i
            shape = next(s for s in ("box", "sphere", "cylinder", "zone") if s in spec)
            out.append(Region(
                name=name,
                shape=shape,
                geometry=self.region_geometry(shape, spec[shape], f"{path}.{shape}"),
                max_cell_size=self.quantity(spec, "max_cell_size", "length", path),
            ))
        return tuple(out)

    def region_geometry(self, shape: str, spec: Any, path: str) -> dict[str, object]:
        if shape == "zone":
            return {"zone": spec}
        if shape == "box":
            lo = self.point(spec["min"], f"{path}.min")
            hi = self.point(spec["max"], f"{path}.max")
            bad = [(axis, a, b) for axis, a, b in zip("xyz", lo or (), hi or ()) if not a < b]
            if bad:
                axis, a, b = bad[0]
                self.problem(f"{path}.max", f"the box's max {axis} ({b:g} m) must be greater "
                                            f"than its min {axis} ({a:g} m)")
            return {"min": lo, "max": hi}
        radius = self.quantity(spec, "radius", "length", path)
        if shape == "sphere":
            return {"center": self.point(spec["center"], f"{path}.center"), "radius": radius}
        start = self.point(spec["start"], f"{path}.start")
        end = self.point(spec["end"], f"{path}.end")
        if start is not None and start == end:
            self.problem(f"{path}.end", "the cylinder's start and end are the same point")
        return {"start": start, "end": end, "radius": radius}

    def checks(self, spec: dict[str, Any], region_names: set[str] | None) -> Checks:
        """Rule sets, overrides and waivers; a waiver's region must be one of
        ``region_names`` (None when the regions could not be read)."""
        waivers = []
        for i, item in enumerate(spec.get("waivers", [])):
            key = f"checks.waivers[{i}]"
            region = item.get("region")
            if region is not None and region_names is not None and region not in region_names:
                known = ", ".join(sorted(region_names)) or "none defined"
                self.problem(f"{key}.region", f"waiver names region '{region}', which is not "
                                              f"in regions (known: {known})")
            waivers.append(Waiver(
                rule=item["rule"],
                reason=item["reason"],
                approved_by=item["approved_by"],
                expires=_dt.date.fromisoformat(item["expires"]),
                boundary=item.get("boundary"),
                region=region,
                key=key,
            ))
        return Checks(
            rule_sets=tuple(spec.get("rule_sets", ("general",))),
            rules={rule: dict(params) for rule, params in spec.get("rules", {}).items()},
            waivers=tuple(waivers),
        )

    def domain(self, spec: dict[str, Any], flow_direction: list[float] | None):
        """The body groups and the up direction, which must not lie along the flow."""
        from caselint.manifest.case import Domain

        up = self.direction(spec["up"], "domain.up") if "up" in spec else None
        flow = (self.direction(flow_direction, "physics.flow.direction")
                if flow_direction is not None else None)
        if up is not None and flow is not None:
            cross = (up[1] * flow[2] - up[2] * flow[1], up[2] * flow[0] - up[0] * flow[2],
                     up[0] * flow[1] - up[1] * flow[0])
            # within about 0.6 deg of the flow direction there is no usable height axis
            if math.sqrt(sum(c * c for c in cross)) < 0.01:
                self.problem("domain.up", f"up {list(spec['up'])} lies along the flow direction "
                                          f"{list(flow_direction)}; give the vertical direction, "
                                          "e.g. [0, 0, 1]")
        return Domain(body=tuple(spec.get("body", ())), up=up)

    def review(self, spec: dict[str, Any]) -> Review:
        return Review(
            prepared_by=spec.get("prepared_by"),
            reviewers=tuple(spec.get("reviewers", ())),
            approved_by=spec.get("approved_by"),
        )

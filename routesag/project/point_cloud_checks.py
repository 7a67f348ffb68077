"""Cross-checks of the point cloud settings: [inputs] point_cloud, [point_cloud], [survey], [stringing] source."""
from __future__ import annotations


def check_point_cloud(source: str, raw: dict, settings: dict, problems: list[str]) -> None:
    """Append every problem of the point cloud settings to ``problems``."""
    has_cloud = settings.get("inputs", {}).get("point_cloud") is not None
    for table in ("point_cloud", "survey"):
        if raw.get(table) and not has_cloud:
            problems.append(f"{source}: [{table}] needs [inputs] point_cloud (the LiDAR point cloud)")
    cloud = settings.get("point_cloud", {})
    wire_classes, surface_classes = cloud.get("wire_classes") or [], cloud.get("surface_classes") or []
    if "wire_classes" in cloud and not wire_classes:
        problems.append(f"{source}: [point_cloud]: wire_classes must name at least one LAS class")
    both = sorted(set(wire_classes) & set(surface_classes))
    if both:
        problems.append(f"{source}: [point_cloud]: class(es) {', '.join(map(str, both))} are in both wire_classes "
                        "and surface_classes; a point is either a wire or a surface")
    survey = settings.get("survey", {})
    own_temperatures = survey.get("wire_temperature_c") or {}
    wires = settings.get("wires", [])
    names = [w.get("name") for w in wires]
    for name in own_temperatures:
        if wires and name not in names:
            problems.append(f"{source}: [survey.wire_temperature_c]: {name!r} is not a [[wires]] name "
                            f"(wires: {', '.join(map(str, names))})")
    for label, stringing, wire_name in _stringings(settings):
        if stringing.get("source") != "as_found":
            continue
        if not has_cloud:
            problems.append(f"{source}: {label}: source = 'as_found' needs [inputs] point_cloud "
                            "(the fitted wires give the as-found state)")
        elif survey.get("conductor_temperature_c") is None and survey.get("current_a") is None \
                and wire_name not in own_temperatures:
            problems.append(f"{source}: {label}: source = 'as_found' needs [survey] conductor_temperature_c "
                            "(the conductor temperature during the survey) [degC] or current_a [A]")


def _stringings(settings: dict):
    """(label, stringing table, wire name or None) of the line's stringing and every wire that uses it or its own."""
    line = settings.get("stringing", {})
    wires = settings.get("wires", [])
    if not wires:
        yield "[stringing]", line, None
    for i, wire in enumerate(wires):
        own = wire.get("stringing")
        label = f"[[wires]] #{i + 1} ({wire.get('name')!r})" + (" stringing" if own else ": [stringing]")
        yield label, own if isinstance(own, dict) else line, wire.get("name")

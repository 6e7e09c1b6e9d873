"""The whole spec schema: the format version and the document, section by section
(``optimizer.specfile``).
"""

from __future__ import annotations

from yaml.nodes import MappingNode, Node, ScalarNode

from ..errors import SpecError
from ..spec import (
    Spec,
)
from ..yamlread import (
    Section,
    join_names,
    kind_of,
    node_line,
)
from .choices import _PreferencesSchema
from .circuit import _CircuitSchema
from .keys import (
    AMPLIFIER_KEYS,
    FORMAT_VERSION,
    PREFERENCE_KEYS,
    RAILS_KEYS,
    REFERENCE_KEYS,
    REQUIREMENT_KEYS,
    SIGNAL_KEYS,
    TOP_KEYS,
)
from .needs import _RequirementsSchema


class _Schema(_CircuitSchema, _RequirementsSchema, _PreferencesSchema):
    """Reads each section of one spec file with one :class:`Reader`."""

    # -- the whole file -----------------------------------------------------------------------

    def version(self, node: Node, key: str) -> int:
        expected = f"the format version, {FORMAT_VERSION}"
        version = self.r.integer(expected)(node, key)
        if version != FORMAT_VERSION:
            raise SpecError(
                f"unsupported format version {version}; this Quartet reads format {FORMAT_VERSION}",
                path=self.r.path,
                key=self.r.shown(key),
                line=node_line(node),
            )
        return version

    def spec(self, root: Node) -> Spec | None:
        r = self.r
        if not isinstance(root, MappingNode):
            r.fail(
                "",
                node_line(root),
                f"expected a mapping of sections at the top level ({join_names(TOP_KEYS)}), "
                f"got {kind_of(root)}",
            )
        names = {str(k.value) for k, _ in root.value if isinstance(k, ScalarNode)}
        if not names & set(TOP_KEYS):
            found = join_names(sorted(names)) or "none"
            r.fail(
                "",
                node_line(root),
                f"not a Quartet spec file: expected quartet_spec: {FORMAT_VERSION} and the "
                f"sections {join_names(TOP_KEYS[2:])} (top-level keys found: {found})",
            )
        top = r.mapping(root, "", TOP_KEYS, line=node_line(root))
        if r.prefix:  # a spec inside another file: the version key may be left out
            top.opt("quartet_spec", self.version, 0)
        else:
            top.need("quartet_spec", self.version, f"the format version, {FORMAT_VERSION}", 0)
        title = top.opt("title", r.line_text, None)
        sections = {
            "amplifier": AMPLIFIER_KEYS,
            "rails": RAILS_KEYS,
            "signal": SIGNAL_KEYS,
            "reference": REFERENCE_KEYS,
            "requirements": REQUIREMENT_KEYS,
        }
        maps: dict[str, Section | None] = {}
        for name, keys in sections.items():
            if not top.has(name):
                r.problem(
                    name,
                    top.line,
                    f"required section is missing; expected a mapping with keys {join_names(keys)}",
                )
                maps[name] = None
            else:
                maps[name] = r.section(top, name, keys)
        amplifier_map, rails_map, signal_map = maps["amplifier"], maps["rails"], maps["signal"]
        reference_map, requirements_map = maps["reference"], maps["requirements"]
        amplifier = None if amplifier_map is None else self.amplifier(amplifier_map)
        rails = None if rails_map is None else self.rails(rails_map)
        signal = None if signal_map is None else self.signal(signal_map)
        reference = None if reference_map is None else self.reference(reference_map)
        requirements = (
            None if requirements_map is None else self.requirements(requirements_map, signal)
        )
        preferences = self.preferences(r.section(top, "preferences", PREFERENCE_KEYS))
        if rails is not None and amplifier is not None:
            self.check_spans(amplifier, rails)
        if amplifier is not None and amplifier_map is not None:
            self.check_amplifier(amplifier_map, amplifier)
        if rails is not None and reference is not None:
            self.check_reference(reference, rails)
        if r.problems:
            return None
        assert amplifier is not None and rails is not None and signal is not None
        assert reference is not None and requirements is not None and preferences is not None
        return Spec(
            amplifier=amplifier,
            rails=rails,
            signal=signal,
            reference=reference,
            requirements=requirements,
            preferences=preferences,
            source_path=r.path,
            title=title,
            warnings=tuple(text for _, text in sorted(r.warnings)),
        )

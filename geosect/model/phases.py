"""Phase names: parse ``[P|S:]kind[:target]`` and map phases to IASPEI codes.

A phase string names the wave type (``P`` or ``S``, P when left out), the kind
of path and, for some kinds, the interface or layer it refers to::

    direct                 the wave between source and receiver with no reflection
    first                  the first arrival (earliest of all phases that exist)
    reflection:<interface> reflected from the top of interface <interface>
    head:<interface>       refracted along the top of the layer below <interface>
    turning:<layer>        diving through layer <layer> (a velocity gradient) and back up

Examples: ``"reflection:moho"``, ``"S:head:moho"``, ``"P:direct"``, ``"first"``.

>>> parse_phase("S:reflection:moho")
Phase(wave='S', kind='reflection', target='moho')
>>> str(parse_phase("head:moho"))
'P:head:moho'
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Protocol

from geosect.errors import InputError

__all__ = ["Phase", "parse_phase", "iaspei_label", "PHASE_KINDS", "ROLES"]

#: The kinds of path a phase can take.
PHASE_KINDS: tuple[str, ...] = ("direct", "reflection", "head", "turning", "first")
#: Kinds that need a target (an interface or, for ``turning``, a layer).
_NEEDS_TARGET = {"reflection", "head", "turning"}
#: Role marks an interface may carry.
ROLES: tuple[str, ...] = ("conrad", "moho")

_FORMS = (
    "accepted forms: 'direct', 'first', 'reflection:<interface>', 'head:<interface>', "
    "'turning:<layer>', each optionally preceded by 'P:' or 'S:' (P when left out), "
    "for example 'reflection:moho' or 'S:head:moho'"
)


@dataclass(frozen=True)
class Phase:
    """A parsed phase.

    Attributes
    ----------
    wave : {'P', 'S'}
        Wave type.
    kind : {'direct', 'reflection', 'head', 'turning', 'first'}
        Kind of path.
    target : str or None
        Interface name (``reflection``, ``head``) or layer name (``turning``);
        None for ``direct`` and ``first``.
    """

    wave: str
    kind: str
    target: str | None = None

    def __str__(self) -> str:
        text = f"{self.wave}:{self.kind}"
        return f"{text}:{self.target}" if self.target is not None else text


def parse_phase(text: str | Phase) -> Phase:
    """Parse a phase string ``[P|S:]kind[:target]``.

    Parameters
    ----------
    text : str or Phase
        The phase, for example ``"reflection:moho"`` or ``"S:head:moho"``.
        The wave letter and the kind are read case-insensitively; the target
        name is kept as written.  A :class:`Phase` is returned unchanged.

    Returns
    -------
    Phase

    Raises
    ------
    InputError
        When the string does not follow one of the accepted forms; the message
        lists them.

    Examples
    --------
    >>> parse_phase("direct")
    Phase(wave='P', kind='direct', target=None)
    >>> parse_phase("s:turning:lower crust")
    Phase(wave='S', kind='turning', target='lower crust')
    """
    if isinstance(text, Phase):
        return text
    if not isinstance(text, str):
        raise InputError(f"phase {text!r} is not a string", key="phase",
                         fix=_FORMS)
    tokens = text.strip().split(":")
    wave = "P"
    if len(tokens) > 1 and tokens[0].strip().upper() in ("P", "S"):
        wave = tokens[0].strip().upper()
        tokens = tokens[1:]
    parts = [tokens[0].strip()]
    if len(tokens) > 1:
        parts.append(":".join(tokens[1:]).strip())
    kind = parts[0].lower()
    target = parts[1] if len(parts) > 1 else None
    if kind not in PHASE_KINDS:
        raise InputError(f"phase '{text}': unknown kind '{parts[0]}'", key="phase", fix=_FORMS)
    if kind in _NEEDS_TARGET:
        if not target:
            what = "a layer" if kind == "turning" else "an interface"
            raise InputError(f"phase '{text}': '{kind}' needs {what} name after a colon",
                             key="phase", fix=_FORMS)
    elif target is not None:
        raise InputError(f"phase '{text}': '{kind}' takes no interface or layer name",
                         key="phase", fix=_FORMS)
    return Phase(wave=wave, kind=kind, target=target)


class _HasRoles(Protocol):  # pragma: no cover - typing only
    def role_of(self, interface: str) -> str | None: ...
    def interface_with_role(self, role: str) -> str | None: ...
    def layer_position(self, layer: str) -> int: ...
    def interface_position(self, interface: str) -> int: ...


def iaspei_label(phase: str | Phase, model: _HasRoles) -> str | None:
    """The IASPEI code of a phase, where the model marks which interface is which.

    The codes follow the IASPEI standard seismic phase list (Storchak et al.,
    2003, Seismol. Res. Lett. 74(6), 761-772; codes as recalled from memory):
    ``Pg``/``Sg`` upper-crustal (direct or turning above the mid-crustal
    boundary), ``Pb``/``Sb`` lower-crustal (head wave along, or turning below,
    the mid-crustal boundary), ``PmP``/``SmS`` reflected from the crust-mantle
    boundary, ``Pn``/``Sn`` head wave along, or turning below, the crust-mantle
    boundary.

    Parameters
    ----------
    phase : str or Phase
        The phase.
    model : LayeredModel
        A model whose interfaces may carry the roles ``'conrad'`` (mid-crustal
        boundary) and ``'moho'`` (crust-mantle boundary).

    Returns
    -------
    str or None
        The code, or None where the model marks no role that decides it (for
        example a reflection from an unmarked interface, or ``first``, whose
        code depends on which phase arrives first).
    """
    ph = parse_phase(phase)
    w = ph.wave
    conrad = model.interface_with_role("conrad")
    moho = model.interface_with_role("moho")
    if conrad is None and moho is None:
        return None
    if ph.kind == "direct":
        return f"{w}g"
    if ph.kind == "reflection":
        if model.role_of(ph.target) == "moho":
            return f"{w}m{w}"
        return None
    if ph.kind == "head":
        role = model.role_of(ph.target)
        if role == "moho":
            return f"{w}n"
        if role == "conrad":
            return f"{w}b"
        return None
    if ph.kind == "turning":
        # the layer's top interface has the same index as the layer
        pos = model.layer_position(ph.target)
        if moho is not None and pos >= model.interface_position(moho):
            return f"{w}n"
        if conrad is not None and pos >= model.interface_position(conrad):
            return f"{w}b"
        if conrad is not None:
            return f"{w}g"
        return None
    return None

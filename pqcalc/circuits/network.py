"""Piecewise-linear circuit networks and their state equations in each switching mode.

A :class:`Network` is a list of two-terminal elements between named nodes (``"0"`` is
ground, the neutral): resistors, capacitors, inductors, piecewise-linear diodes, switches,
voltage sources and current sources driven by an input channel. In every *mode* (each diode
and switch either conducting or blocking) the circuit is linear; :meth:`Network.mode` gives

    x' = A x + B u,        x = [capacitor voltages, inductor currents],
    u = [source voltage v_s(t), 1, further input channels held constant per mode ...],

and a matrix ``Q`` whose rows are every element's current and voltage as linear functions of
``[x, u]``. The equations come from modified nodal analysis of the resistive network that
remains when each capacitor is replaced by a voltage source of its voltage and each inductor
by a current source of its current (every capacitor needs a resistive path and no loop may
hold only capacitors and voltage sources; large shunt resistances keep floating nodes
defined, as in any SPICE netlist).

Diodes are piecewise linear: conducting, ``i = (v - v_on) / r_on``; blocking, ``i = g_off v``.
``n`` identical lamps in parallel are one element set with admittances scaled by ``n``
(see :func:`pqcalc.circuits.drivers.build_group`): the state count does not grow with lamps.

References
----------
C.-W. Ho, A. Ruehli, P. Brennan, "The modified nodal approach to network analysis",
IEEE Trans. Circuits Syst. 22(6), 1975.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from .kernels import COMPILED, assemble_mode

__all__ = ["Network", "Element", "ModeSystem", "CH_SOURCE", "CH_ONE"]

#: input channel of the mains source voltage [V] and of the constant 1 [-]
CH_SOURCE = 0
CH_ONE = 1


@dataclass(frozen=True)
class Element:
    """One two-terminal element; current is positive from node ``a`` through it to ``b``."""

    kind: str  # R C L D S V I
    name: str
    a: int
    b: int
    value: float = 0.0  # R [ohm], C [F], L [H], V/I gain [-]
    v_on: float = 0.0  # diode forward threshold [V]
    r_on: float = 0.0  # diode / switch on resistance [ohm]
    g_off: float = 0.0  # diode / switch off conductance [S]
    channel: int = 0  # input channel of a V or I source
    table: tuple = ()  # (g, i0) segments of a piecewise-affine element


@dataclass(frozen=True)
class ModeSystem:
    """Linear state equations of one mode: ``x' = A x + B u``; ``Q @ [x, u]`` gives element
    currents (rows ``0..ne-1``) and voltages (rows ``ne..2ne-1``)."""

    A: np.ndarray
    B: np.ndarray
    Q: np.ndarray


class Network:
    """A circuit under construction; call :meth:`finalize` before :meth:`mode`."""

    def __init__(self, n_channels: int = 2) -> None:
        self.node_index: dict[str, int] = {"0": 0}
        self.elements: list[Element] = []
        self._names: set[str] = set()
        self.n_channels = n_channels
        self._final = False
        self._cache: dict[tuple, ModeSystem] = {}

    # ------------------------------------------------------------------ building
    def node(self, name: str) -> int:
        if name not in self.node_index:
            self.node_index[name] = len(self.node_index)
        return self.node_index[name]

    def _add(self, kind: str, name: str, a: str, b: str, **kw) -> None:
        if name in self._names:
            raise ValueError(f"internal: element {name!r} defined twice")
        self._names.add(name)
        self.elements.append(Element(kind, name, self.node(a), self.node(b), **kw))

    def R(self, name: str, a: str, b: str, r_ohm: float) -> None:
        _positive(name, r_ohm)
        self._add("R", name, a, b, value=float(r_ohm))

    def C(self, name: str, a: str, b: str, c_f: float) -> None:
        _positive(name, c_f)
        self._add("C", name, a, b, value=float(c_f))

    def L(self, name: str, a: str, b: str, l_h: float) -> None:
        _positive(name, l_h)
        self._add("L", name, a, b, value=float(l_h))

    def D(self, name: str, a: str, b: str, v_on: float, r_on: float, g_off: float) -> None:
        """Diode from anode ``a`` to cathode ``b`` (piecewise linear)."""
        _positive(name, r_on)
        self._add("D", name, a, b, v_on=float(v_on), r_on=float(r_on), g_off=float(g_off))

    def S(self, name: str, a: str, b: str, r_on: float, g_off: float) -> None:
        """Switch whose state is set by a controller."""
        _positive(name, r_on)
        self._add("S", name, a, b, r_on=float(r_on), g_off=float(g_off))

    def G(self, name: str, a: str, b: str, table) -> None:
        """Piecewise-affine element ``i = g_k v + i0_k``, the segment ``k`` set by a
        controller; ``table`` is a sequence of ``(g_k [S], i0_k [A])``."""
        arr = np.asarray(table, dtype=float).reshape(-1, 2)
        tab = tuple(map(tuple, arr.tolist()))
        self._add("G", name, a, b, table=tab)

    def V(self, name: str, a: str, b: str, channel: int, gain: float = 1.0) -> None:
        """Voltage source ``v_a - v_b = gain * u[channel]``."""
        self._add("V", name, a, b, value=float(gain), channel=channel)

    def I(self, name: str, a: str, b: str, channel: int, gain: float = 1.0) -> None:  # noqa: E743
        """Current source ``gain * u[channel]`` flowing from ``a`` through it to ``b``."""
        self._add("I", name, a, b, value=float(gain), channel=channel)

    def finalize(self) -> Network:
        self.caps = [i for i, e in enumerate(self.elements) if e.kind == "C"]
        self.inds = [i for i, e in enumerate(self.elements) if e.kind == "L"]
        self.diodes = [i for i, e in enumerate(self.elements) if e.kind == "D"]
        self.switches = [i for i, e in enumerate(self.elements) if e.kind in "SG"]
        self.switchable = self.diodes + self.switches
        self.n_x = len(self.caps) + len(self.inds)
        self.n_u = self.n_channels
        self.n_e = len(self.elements)
        self.index = {e.name: i for i, e in enumerate(self.elements)}
        self.state_of = {self.elements[k].name: j for j, k in enumerate(self.caps + self.inds)}
        self._final = True
        return self

    # ------------------------------------------------------------------ queries
    def i_row(self, ms: ModeSystem, name: str) -> np.ndarray:
        """Row over ``[x, u]`` giving the current of element ``name`` [A]."""
        return ms.Q[self.index[name]]

    def v_row(self, ms: ModeSystem, name: str) -> np.ndarray:
        """Row over ``[x, u]`` giving the voltage across element ``name`` [V]."""
        return ms.Q[self.n_e + self.index[name]]

    def mode(self, on: tuple[bool, ...]) -> ModeSystem:
        """State equations with the switchable elements (diodes, then switches and
        piecewise-affine elements, in the order they were added) conducting where ``on`` is
        True (for a piecewise-affine element: the segment index)."""
        key = tuple(on)
        ms = self._cache.get(key)
        if ms is None:
            ms = self._build_compiled(key) if COMPILED else self._build(key)
            self._cache[key] = ms
        return ms

    def _build_compiled(self, on: tuple) -> ModeSystem:
        """:meth:`_build`'s arithmetic in one compiled call."""
        try:
            A, B, Q = assemble_mode(np.array(on, dtype=np.int64), *self.compiled_args())
        except np.linalg.LinAlgError as err:
            raise InputError(
                "the circuit has a floating node or a loop of capacitors and sources; "
                "check the component values"
            ) from err
        return ModeSystem(A, B, Q)

    def compiled_args(self) -> tuple:
        """The mode-independent arrays that :func:`~pqcalc.circuits.kernels.assemble_mode`
        takes after the switch vector (built once)."""
        st = getattr(self, "_st", None)
        if st is None:
            st = self._st = self._static()
        ka = st.get("_kargs")
        if ka is None:
            gs = st["gs"]
            width = max([len(t) for *_, t in gs] + [1])
            gs_g = np.zeros((len(gs), width))
            gs_i0 = np.zeros((len(gs), width))
            for q, (*_, table) in enumerate(gs):
                arr = np.asarray(table, dtype=float).reshape(-1, 2)
                gs_g[q, :len(table)] = arr[:, 0]
                gs_i0[q, :len(table)] = arr[:, 1]
            ka = st["_kargs"] = (
                st["M"], st["Rhs"], st["g_cond"], np.ascontiguousarray(st["inc"]),
                st["ds_on"], st["ds_pos"], st["ds_g_on"], st["ds_g_off"], st["ds_v_on"],
                np.array([j for j, *_ in gs], dtype=np.int64),
                np.array([k for _, k, *_ in gs], dtype=np.int64), gs_g, gs_i0, st["cond"],
                st["g"], st["Q0"], st["vsrc"], st["a"], st["b"], st["caps"], st["inds"],
                st["c_val"], st["l_val"], st["nn"], self.n_x, self.n_x + CH_ONE)
        return ka

    def _static(self) -> dict:
        """The mode-independent part of the nodal equations (resistors, sources, reactive
        elements) and the element incidence, assembled once."""
        els = self.elements
        nn = len(self.node_index) - 1
        vsrc = [i for i, e in enumerate(els) if e.kind in "CV"]
        nz = nn + len(vsrc)
        ncol = self.n_x + self.n_u
        M = np.zeros((nz, nz))
        Rhs = np.zeros((nz, ncol))
        state_col = {k: j for j, k in enumerate(self.caps + self.inds)}
        g = np.zeros(self.n_e)
        for i, e in enumerate(els):
            if e.kind == "R":
                g[i] = 1.0 / e.value
            elif e.kind == "L":
                _inject(Rhs, e.a, e.b, state_col[i], 1.0)
            elif e.kind == "I":
                _inject(Rhs, e.a, e.b, self.n_x + e.channel, e.value)
        for j, i in enumerate(vsrc):
            e, r = els[i], nn + j
            if e.a:
                M[e.a - 1, r] += 1.0
                M[r, e.a - 1] += 1.0
            if e.b:
                M[e.b - 1, r] -= 1.0
                M[r, e.b - 1] -= 1.0
            if e.kind == "C":
                Rhs[r, state_col[i]] = 1.0
            else:
                Rhs[r, self.n_x + e.channel] = e.value
        Q0 = np.zeros((self.n_e, ncol))  # currents fixed by a state or an input
        for i, e in enumerate(els):
            if e.kind == "L":
                Q0[i, state_col[i]] = 1.0
            elif e.kind == "I":
                Q0[i, self.n_x + e.channel] = e.value
        # node incidence of the conducting elements (R, D, S, G): a mode's conductance
        # stamps are Inc diag(g) Inc^T, its constant currents -Inc i0 in the CH_ONE column
        cond = [i for i, e in enumerate(els) if e.kind in "RDSG"]
        inc = np.zeros((nz, len(cond)))
        for k, i in enumerate(cond):
            if els[i].a:
                inc[els[i].a - 1, k] = 1.0
            if els[i].b:
                inc[els[i].b - 1, k] = -1.0
        pos = {i: k for k, i in enumerate(cond)}
        ds = [(j, i) for j, i in enumerate(self.switchable) if els[i].kind in "DS"]
        gs = [(j, i) for j, i in enumerate(self.switchable) if els[i].kind == "G"]
        return {
            "nn": nn, "ncol": ncol, "M": M, "Rhs": Rhs, "g": g, "Q0": Q0, "inc": inc,
            "g_cond": g[cond], "cond": np.array(cond, dtype=int),
            "a": np.array([e.a for e in els], dtype=int),
            "b": np.array([e.b for e in els], dtype=int),
            "ds_on": np.array([j for j, _ in ds], dtype=int),
            "ds_pos": np.array([pos[i] for _, i in ds], dtype=int),
            "ds_el": np.array([i for _, i in ds], dtype=int),
            "ds_g_on": np.array([1.0 / els[i].r_on for _, i in ds]),
            "ds_g_off": np.array([els[i].g_off for _, i in ds]),
            "ds_v_on": np.array([els[i].v_on if els[i].kind == "D" else 0.0 for _, i in ds]),
            "gs": [(j, pos[i], i, els[i].table) for j, i in gs],
            "vsrc": np.array(vsrc, dtype=int),
            "caps": np.array(self.caps, dtype=int),
            "inds": np.array(self.inds, dtype=int),
            "c_val": np.array([els[i].value for i in self.caps]),
            "l_val": np.array([els[i].value for i in self.inds]),
        }

    def _build(self, on: tuple[bool, ...]) -> ModeSystem:
        st = getattr(self, "_st", None)
        if st is None:
            st = self._st = self._static()
        nn, ncol, one = st["nn"], st["ncol"], self.n_x + CH_ONE
        onv = np.array(on, dtype=float)
        # conductances and constant currents (a diode's Norton source g v_on from b to a;
        # a piecewise-affine element's i0) of the conducting elements in this mode
        g_c = st["g_cond"].copy()
        i0_c = np.zeros(g_c.size)
        ds_on = onv[st["ds_on"]] != 0
        g_ds = np.where(ds_on, st["ds_g_on"], st["ds_g_off"])
        g_c[st["ds_pos"]] = g_ds
        i0_c[st["ds_pos"]] = np.where(ds_on, -g_ds * st["ds_v_on"], 0.0)
        for j, k, _i, table in st["gs"]:
            g_c[k], i0_c[k] = table[int(on[j])]
        inc = st["inc"]
        M = st["M"] + (inc * g_c) @ inc.T
        Rhs = st["Rhs"].copy()
        Rhs[:, one] -= inc @ i0_c
        g_of = st["g"].copy()
        g_of[st["cond"]] = g_c
        i_one = np.zeros(self.n_e)
        i_one[st["cond"]] = i0_c
        try:
            Z = np.linalg.solve(M, Rhs)
        except np.linalg.LinAlgError as err:
            raise InputError(
                "the circuit has a floating node or a loop of capacitors and sources; "
                "check the component values"
            ) from err
        Vn = np.vstack([np.zeros((1, ncol)), Z[:nn]])  # node voltages, ground first
        Vel = Vn[st["a"]] - Vn[st["b"]]
        Q = np.empty((2 * self.n_e, ncol))
        Q[self.n_e:] = Vel
        cur = st["Q0"].copy()
        c = st["cond"]
        cur[c] = g_of[c, None] * Vel[c]
        cur[:, one] += i_one
        cur[st["vsrc"]] = Z[nn:]
        Q[: self.n_e] = cur
        AB = np.vstack([cur[st["caps"]] / st["c_val"][:, None],
                        Vel[st["inds"]] / st["l_val"][:, None]])
        return ModeSystem(AB[:, : self.n_x].copy(), AB[:, self.n_x :].copy(), Q)


def _inject(Rhs: np.ndarray, a: int, b: int, col: int, gain: float) -> None:
    """A current ``gain * [x, u][col]`` leaves node ``a`` and enters node ``b``."""
    if a:
        Rhs[a - 1, col] -= gain
    if b:
        Rhs[b - 1, col] += gain


def _positive(name: str, x: float) -> None:
    if not (np.isfinite(x) and x > 0):
        raise InputError(f"{name}: expected a positive finite value, got {x}")

"""PySCF molecules and self-consistent-field objects built from plain structures.

The engine supports closed-shell restricted Hartree–Fock (``method="hf"``) and restricted
Kohn–Sham DFT with any exchange–correlation functional name libxc knows (``"b3lyp"``,
``"pbe0"``, ``"pbe"`` …); with a multiplicity above 1 their spin-unrestricted forms (UHF, UKS;
:mod:`vibrapol.engine.openshell`).  Bad input (unknown element, basis or functional, an
electron count that does not fit the multiplicity) raises :class:`EngineInputError` with one
line saying what to do.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from vibrapol.errors import VibrapolError

if TYPE_CHECKING:
    from vibrapol.engine.solvent import SolventModel

#: SCF energy convergence (hartree) used for every calculation.  Finite differences of α divide
#: the error of each α by 2h (h = 0.005 Å ≈ 0.0094 bohr); converging the orbital gradient to
#: 1e-7 keeps the error of α near 1e-8 bohr³, far below what the central differences resolve.
SCF_CONV_TOL = 1e-11
#: SCF orbital-gradient convergence (see :data:`SCF_CONV_TOL`).
SCF_CONV_TOL_GRAD = 1e-7
#: Maximum SCF iterations before the engine gives up.
SCF_MAX_CYCLE = 200
#: Iterations of the last attempt for an open shell (UHF/UKS) that has not converged.
OPEN_SHELL_MAX_CYCLE = 1000

_HF_NAMES = {"hf", "rhf", "scf"}


class EngineInputError(VibrapolError, ValueError):
    """A structure or method the engine cannot run (bad basis, functional, charge …)."""


class EngineConvergenceError(VibrapolError, RuntimeError):
    """A self-consistent-field or optimisation run did not converge."""


#: Defaults of the engine, shared by the command line and the Python API.
DEFAULT_METHOD = "hf"
DEFAULT_BASIS = "6-31g*"


@dataclass(frozen=True)
class MethodSpec:
    """Electronic-structure model of a calculation.

    Attributes
    ----------
    method : str
        ``"hf"`` or a libxc functional name (case-insensitive; stored lower case).
    basis : str
        Basis-set name PySCF knows (e.g. ``"sto-3g"``, ``"6-31g*"``, ``"cc-pvdz"``).
    charge : int
        Total charge of the molecule.
    multiplicity : int
        Spin multiplicity 2S+1; 1 is a closed shell (RHF/RKS), 2, 3 … open shells
        (UHF/UKS, :mod:`vibrapol.engine.openshell`).
    cartesian_d : bool
        Use Cartesian (6d, 10f) instead of spherical functions; much of the older literature
        used 6d with Pople basis sets, PySCF's default is spherical.
    solvent : SolventModel, optional
        Implicit solvent (:mod:`vibrapol.engine.solvent`); None for a molecule in vacuum.

    A dispersion suffix of the method (``b3lyp-d3bj``, :mod:`vibrapol.engine.dispersion`) is
    kept in ``method``, in canonical form (``-d3`` becomes ``-d3zero``).
    density_fit : bool
        Coulomb and exchange integrals by density fitting (PySCF's ``density_fit()``) in every
        SCF, gradient, Hessian and CPHF of the run, so that all of them use the same fitted
        Hamiltonian; accuracy in docs/engine-routes.md.
    auxbasis : str or None
        Auxiliary basis of the fit (stored lower case); None: PySCF's choice for the orbital
        basis (:func:`auxbasis_label`).
    """

    method: str = "hf"
    basis: str = "sto-3g"
    charge: int = 0
    multiplicity: int = 1
    cartesian_d: bool = False
    solvent: SolventModel | None = None
    density_fit: bool = False
    auxbasis: str | None = None

    def __post_init__(self) -> None:
        from vibrapol.engine.dispersion import normalize_method

        object.__setattr__(self, "method", normalize_method(self.method))
        object.__setattr__(self, "basis", self.basis.strip().lower())
        aux = self.auxbasis.strip().lower() if self.auxbasis else None
        if aux is not None and not self.density_fit:
            raise EngineInputError(
                "--auxbasis needs density fitting (--density-fit): without it every integral "
                "is exact and no auxiliary basis is used"
            )
        object.__setattr__(self, "auxbasis", aux)

    @property
    def is_hf(self) -> bool:
        """True for Hartree–Fock (with or without a dispersion suffix), False for DFT."""
        from vibrapol.engine.dispersion import split_dispersion

        return split_dispersion(self.method)[0] in _HF_NAMES

    @property
    def method_label(self) -> str:
        """The method as provenance shows it: ``HF``, ``HF-D3BJ``, ``B3LYP-D4``."""
        from vibrapol.engine.dispersion import split_dispersion

        base, disp = split_dispersion(self.method)
        name = "HF" if base in _HF_NAMES else base.upper()
        return name + (f"-{disp.upper()}" if disp else "")

    @property
    def is_unrestricted(self) -> bool:
        """True for an open shell (multiplicity > 1): UHF or UKS."""
        return self.multiplicity > 1

    def label(self) -> str:
        """Short text such as ``HF/6-31g*`` for provenance and messages."""
        name = ("U" if self.is_unrestricted else "") + self.method_label
        text = f"{name}/{self.basis}" + (" (6d)" if self.cartesian_d else "")
        text += " (density fitting)" if self.density_fit else ""
        return text + (f" in {self.solvent.label()}" if self.solvent is not None else "")


def check_spin_parity(n_electrons: int, spec: MethodSpec) -> None:
    """Raise :class:`EngineInputError` unless ``n_electrons`` fits ``spec.multiplicity``.

    2S + 1 = M needs 2S = M − 1 unpaired electrons: the electron count and M − 1 must be both
    even or both odd, and there must be at least M − 1 electrons.
    """
    unpaired = spec.multiplicity - 1
    if (n_electrons - unpaired) % 2:
        kind, fits = ("odd", "2, 4, 6 …") if n_electrons % 2 else ("even", "1, 3, 5 …")
        raise EngineInputError(
            f"{n_electrons} electrons (charge {spec.charge}) cannot have multiplicity "
            f"{spec.multiplicity}: an {kind} number of electrons needs multiplicity {fits}; "
            "check --charge and --multiplicity"
        )
    if unpaired > n_electrons:
        raise EngineInputError(
            f"multiplicity {spec.multiplicity} needs {unpaired} unpaired electrons, but there "
            f"are only {n_electrons} (charge {spec.charge}); check --multiplicity"
        )


def check_functional(method: str) -> None:
    """Raise :class:`EngineInputError` unless ``method`` is HF or a functional libxc knows."""
    if not method.strip():
        raise EngineInputError(
            "--method is empty: use 'hf' or a DFT functional name such as 'b3lyp', 'pbe0'"
        )
    from vibrapol.engine.dispersion import check_dispersion, normalize_method, split_dispersion

    check_dispersion(normalize_method(method))
    if split_dispersion(method)[0] in _HF_NAMES:
        return
    from pyscf.dft import libxc

    try:
        libxc.parse_xc(method)
    except (KeyError, ValueError) as exc:
        raise EngineInputError(
            f"unknown method {method!r}: use 'hf' or a DFT functional name "
            "such as 'b3lyp', 'pbe0', 'pbe'"
        ) from exc


def _quiet():  # noqa: ANN202
    """Swallow what PySCF prints while it looks up a basis (it is reported by us).

    In this thread only (:func:`~vibrapol.engine.quiet.quiet_streams`): jobs run in threads too.
    """
    from vibrapol.engine.quiet import quiet_streams

    return quiet_streams()


def check_basis(basis: str, atomic_numbers: np.ndarray) -> None:
    """Raise :class:`EngineInputError` unless PySCF's library has ``basis`` for every element.

    Looked up element by element before any molecule is built, with PySCF's own messages
    silenced, so that the user sees one line naming the basis and the elements it lacks.
    """
    from pyscf.data.elements import ELEMENTS
    from pyscf.gto import basis as basis_library

    if not basis.strip():
        raise EngineInputError(
            "--basis is empty: give a basis set name PySCF knows, e.g. 'sto-3g', '6-31g*'"
        )
    lacking = []
    for z in sorted({int(v) for v in np.asarray(atomic_numbers).ravel()}):
        symbol = ELEMENTS[z]
        try:
            with _quiet():
                shells = basis_library.load(basis, symbol)
        except KeyError as exc:  # PySCF: KeyError for a name it does not know at all
            raise EngineInputError(
                f"unknown basis {basis!r}: use a name PySCF knows, e.g. 'sto-3g', '6-31g*', "
                "'cc-pvdz'"
            ) from exc
        except Exception:  # noqa: BLE001 - BasisNotFoundError, or a malformed basis file
            shells = []
        if not shells:
            lacking.append(symbol)
    if lacking:
        raise EngineInputError(
            f"unknown basis {basis!r} (or not defined for these elements): none for "
            f"{', '.join(lacking)}; use a name PySCF knows, e.g. 'sto-3g', '6-31g*', 'cc-pvdz'"
        )


#: Transition metals (groups 3-11 and the f block; group 12 keeps a full d shell): a
#: closed-shell singlet is often not their ground state.
TRANSITION_METALS = frozenset([*range(21, 30), *range(39, 48), *range(57, 80), *range(89, 112)])


def transition_metal_note(atomic_numbers: np.ndarray, spec: MethodSpec) -> str | None:
    """One sentence when a molecule with transition metals is run as a closed-shell singlet."""
    from pyscf.data.elements import ELEMENTS

    metals = sorted({int(z) for z in atomic_numbers if int(z) in TRANSITION_METALS})
    if not metals or spec.multiplicity != 1:
        return None
    names = ", ".join(ELEMENTS[z] for z in metals)
    return (
        f"transition metal ({names}) computed as a closed-shell singlet (multiplicity 1, the "
        "default); many such molecules have an open-shell ground state: check it with "
        "another program and give --multiplicity if it is not a singlet"
    )


def build_molecule(atomic_numbers: np.ndarray, coordinates_ang: np.ndarray, spec: MethodSpec):
    """A built :class:`pyscf.gto.Mole` (closed shell, or open shell for multiplicity > 1).

    Parameters
    ----------
    atomic_numbers : array of int, shape (N,)
    coordinates_ang : array, shape (N, 3), Å
    spec : MethodSpec

    Raises
    ------
    EngineInputError
        Unknown element or basis, or an electron count that does not fit the multiplicity.
    """
    from pyscf import gto
    from pyscf.lib.exceptions import BasisNotFoundError

    z = np.asarray(atomic_numbers, dtype=int)
    xyz = np.asarray(coordinates_ang, dtype=float)
    if z.ndim != 1 or xyz.shape != (z.shape[0], 3) or z.shape[0] == 0:
        raise EngineInputError(
            f"need N atomic numbers and an (N, 3) coordinate array, got {z.shape} and {xyz.shape}"
        )
    if np.any(z < 1) or np.any(z > 118):
        raise EngineInputError(
            f"atomic numbers must be between 1 and 118, got {sorted(set(z.tolist()))}"
        )
    n_electrons = int(z.sum()) - spec.charge
    if n_electrons <= 0:
        raise EngineInputError(
            f"charge {spec.charge} leaves {n_electrons} electrons on this structure; check --charge"
        )
    if spec.multiplicity < 1:
        raise EngineInputError(f"multiplicity must be 1 or more, got {spec.multiplicity}")
    if spec.multiplicity != 1:
        check_spin_parity(n_electrons, spec)
    elif n_electrons % 2:
        raise EngineInputError(
            f"{n_electrons} electrons (charge {spec.charge}) cannot be closed-shell "
            "with multiplicity 1; "
            "check --charge, or give --multiplicity 2 for a radical"
        )
    check_functional(spec.method)
    check_basis(spec.basis, z)
    if spec.auxbasis:
        try:
            check_basis(spec.auxbasis, z)
        except EngineInputError as exc:
            raise EngineInputError(
                f"--auxbasis {spec.auxbasis!r}: {exc}; e.g. 'def2-universal-jkfit'"
            ) from exc
    mol = gto.Mole()
    mol.atom = [(int(zi), tuple(r)) for zi, r in zip(z, xyz, strict=True)]
    mol.unit = "Angstrom"
    mol.basis = spec.basis
    mol.charge = spec.charge
    mol.spin = spec.multiplicity - 1
    mol.cart = spec.cartesian_d
    from vibrapol.engine.ecp import ecp_core_electrons

    mol.ecp = {symbol: spec.basis for symbol in ecp_core_electrons(spec.basis, z)}
    mol.verbose = 0
    mol.output = None
    try:
        with _quiet():
            mol.build(dump_input=False, parse_arg=False)
    except (BasisNotFoundError, KeyError) as exc:  # PySCF: KeyError for an unknown basis name
        raise EngineInputError(
            f"unknown basis {spec.basis!r} (or not defined for these elements): "
            "use a name PySCF knows, "
            "e.g. 'sto-3g', '6-31g*', 'cc-pvdz'"
        ) from exc
    except (RuntimeError, ValueError) as exc:
        raise EngineInputError(
            f"PySCF cannot build this molecule with basis {spec.basis!r}: {exc}"
        ) from exc
    if mol.nao == 0:
        raise EngineInputError(f"basis {spec.basis!r} has no functions for these elements")
    n_electrons = mol.nelectron  # without the electrons an ECP replaces
    n_alpha = (n_electrons + spec.multiplicity - 1) // 2
    if spec.multiplicity != 1 and n_alpha > mol.nao:
        raise EngineInputError(
            f"multiplicity {spec.multiplicity} needs {n_alpha} alpha electrons, more than the "
            f"{mol.nao} orbitals of basis {spec.basis!r}; check --multiplicity"
        )
    if n_electrons > 2 * mol.nao:
        raise EngineInputError(
            f"charge {spec.charge} gives {n_electrons} electrons, more than the {mol.nao} "
            f"orbitals of basis {spec.basis!r} can hold ({2 * mol.nao}); check --charge"
        )
    return mol


def build_scf(mol, spec: MethodSpec):
    """An unconverged RHF/RKS (open shell: UHF/UKS) object with the engine's tight settings."""
    from pyscf import dft, scf

    if spec.is_unrestricted:
        mf = scf.UHF(mol) if spec.is_hf else dft.UKS(mol)
        if not spec.is_hf:
            mf.xc = spec.method
    elif spec.is_hf:
        mf = scf.RHF(mol)
    else:
        mf = dft.RKS(mol)
        mf.xc = spec.method
    if spec.density_fit:
        mf = mf.density_fit(auxbasis=spec.auxbasis)
    mf.conv_tol = SCF_CONV_TOL
    mf.conv_tol_grad = SCF_CONV_TOL_GRAD
    mf.max_cycle = SCF_MAX_CYCLE
    mf.verbose = 0
    return _with_models(mf, spec)


def _with_models(mf, spec: MethodSpec):  # noqa: ANN001, ANN202
    """``mf`` with the dispersion of HF-D and the continuum of ``spec.solvent``.

    For DFT PySCF reads the dispersion suffix from ``xc`` itself.
    """
    from vibrapol.engine.dispersion import dispersion_version

    if spec.is_hf and dispersion_version(spec.method) is not None:
        mf.disp = dispersion_version(spec.method)
    if spec.solvent is not None:
        from vibrapol.engine.solvent import attach_pcm

        mf = attach_pcm(mf, spec.solvent)
    return mf


#: Accuracy of density fitting against exact integrals, measured (docs/engine-routes.md,
#: "Cheaper field tasks and integrals"); quoted in the provenance and the option's help.
DENSITY_FIT_ACCURACY = (
    "measured error against exact integrals at most about 1 cm-1 in frequencies, 1 % in the "
    "activities of bands above 1 % of the strongest (2 % on weaker ones) and 0.005 in "
    "depolarization ratios"
)


def integral_notes(mol, spec: MethodSpec) -> list[str]:
    """Provenance lines on the integrals: density fitting (when on) and the DFT grid."""
    notes = []
    if spec.density_fit:
        notes.append(
            "density fitting (PySCF density_fit) in every SCF, gradient, Hessian and CPHF; "
            f"auxiliary basis {auxbasis_label(mol, spec)}; {DENSITY_FIT_ACCURACY}"
        )
    if not spec.is_hf:
        level = build_scf(mol, spec).grids.level
        notes.append(f"DFT integration grid: PySCF grids.level {level} in every stage")
    return notes


def auxbasis_label(mol, spec: MethodSpec) -> str:
    """The auxiliary basis a density-fitted run uses, as text for the provenance.

    The given name, or PySCF's choice for the orbital basis and method (for example
    ``cc-pvdz-jkfit`` for 6-31G*, even-tempered Gaussians where it has none).
    """
    if spec.auxbasis:
        return spec.auxbasis
    from pyscf.df import addons

    chosen = addons.make_auxbasis(mol, xc="HF" if spec.is_hf else spec.method)
    names = sorted({v if isinstance(v, str) else "even-tempered" for v in chosen.values()})
    return "PySCF's default for the basis: " + ", ".join(names)


def converge(mf, dm0=None, restart=None):  # noqa: ANN001, ANN201
    """Run ``mf`` from ``dm0``; when it does not converge, try again with a level shift.

    The second attempt runs on ``restart()`` (a fresh SCF object) when given, else on ``mf``
    itself; it starts from the default guess with a 0.3 hartree level shift, then removes the
    shift and converges from that density; an open shell that still has not converged gets a
    third attempt with :data:`OPEN_SHELL_MAX_CYCLE` iterations.  Returns the SCF object of the
    last attempt; the caller checks ``converged``.  A ``dm0`` of the wrong shape is ignored.
    """
    shape = (mf.mol.nao, mf.mol.nao)
    if getattr(mf, "istype", None) is not None and mf.istype("UHF"):
        shape = (2, *shape)  # UHF/UKS: alpha and beta densities
    if dm0 is not None and np.shape(dm0) != shape:
        dm0 = None
    mf.kernel(dm0=dm0)
    if not mf.converged:
        if restart is not None:
            mf = restart()
        mf.level_shift = 0.3
        mf.kernel()
        mf.level_shift = 0.0
        mf.kernel(dm0=mf.make_rdm1())
    if not mf.converged and shape[0] == 2:
        # An open shell near a UHF instability (NO2 in a field across its C2 axis) converges,
        # but slowly: a third attempt goes on from the last density with more cycles.
        cycles = mf.max_cycle
        mf.max_cycle = OPEN_SHELL_MAX_CYCLE
        mf.kernel(dm0=mf.make_rdm1())
        mf.max_cycle = cycles
    return mf


def run_scf(
    mol, spec: MethodSpec, dm0: np.ndarray | None = None, where: str = "reference geometry"
):
    """Build and converge an SCF object; ``dm0`` is an optional starting density matrix.

    Raises
    ------
    EngineConvergenceError
        When the SCF does not converge within :data:`SCF_MAX_CYCLE` iterations.
    """
    # A second attempt from the default guess with level shifting usually rescues a failure.
    mf = converge(build_scf(mol, spec), dm0, restart=lambda: build_scf(mol, spec))
    if not mf.converged:
        raise EngineConvergenceError(
            f"{spec.label()} SCF did not converge at the {where} in "
            f"{OPEN_SHELL_MAX_CYCLE if spec.is_unrestricted else SCF_MAX_CYCLE} cycles; "
            "check the structure (units, missing atoms) and the charge"
        )
    if spec.is_unrestricted:  # refuse a solution too spin-contaminated to differentiate
        from vibrapol.engine.openshell import check_scf_spin

        check_scf_spin(mf, spec, where)
    return mf

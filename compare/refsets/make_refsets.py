"""Writes structures-exp.json and moments-exp.json beside this file: the
built-in reference sets of moltrail compare. The values are recalled from
the cited compilations (from_memory is true on every entry); edit them here
and run `python3 make_refsets.py` to rewrite both files."""
import json
import os

HERE = os.path.dirname(os.path.abspath(__file__))
HH = "K. P. Huber and G. Herzberg, Molecular Spectra and Molecular Structure IV: Constants of Diatomic Molecules (Van Nostrand Reinhold, 1979)"
LB = "Landolt–Börnstein, New Series II/7, II/15, II/21: Structure Data of Free Polyatomic Molecules (Springer)"
CCC = "NIST Computational Chemistry Comparison and Benchmark Database (CCCBDB), Release 22, experimental geometry data"
NLM = "R. D. Nelson Jr., D. R. Lide Jr. and A. A. Maryott, Selected Values of Electric Dipole Moments for Molecules in the Gas Phase, NSRDS-NBS 10 (1967)"
CRC = "CRC Handbook of Chemistry and Physics, table 'Dipole Moments' (gas-phase values)"
GG = "C. G. Gray and K. E. Gubbins, Theory of Molecular Fluids, Vol. 1 (Oxford, 1984), table of molecular multipole moments"

M = {
 "H2":   ("dihydrogen", ["hydrogen"], "H2", ["H","H"], 1),
 "HF":   ("hydrogen fluoride", [], "FH", ["H","F"], 1),
 "HCl":  ("hydrogen chloride", [], "ClH", ["H","Cl"], 1),
 "CO":   ("carbon monoxide", [], "CO", ["C","O"], 1),
 "N2":   ("dinitrogen", ["nitrogen"], "N2", ["N","N"], 1),
 "F2":   ("difluorine", ["fluorine"], "F2", ["F","F"], 1),
 "Cl2":  ("dichlorine", ["chlorine"], "Cl2", ["Cl","Cl"], 1),
 "LiH":  ("lithium hydride", [], "HLi", ["Li","H"], 1),
 "LiF":  ("lithium fluoride", [], "FLi", ["Li","F"], 1),
 "NaCl": ("sodium chloride", [], "ClNa", ["Na","Cl"], 1),
 "CS":   ("carbon monosulfide", [], "CS", ["C","S"], 1),
 "PN":   ("phosphorus mononitride", [], "NP", ["P","N"], 1),
 "OH":   ("hydroxyl radical", ["hydroxyl"], "HO", ["O","H"], 2),
 "H2O":  ("water", [], "H2O", ["O","H","H"], 1),
 "NH3":  ("ammonia", [], "H3N", ["N","H","H","H"], 1),
 "CH4":  ("methane", [], "CH4", ["C","H","H","H","H"], 1),
 "CO2":  ("carbon dioxide", [], "CO2", ["C","O","O"], 1),
 "HCN":  ("hydrogen cyanide", [], "CHN", ["H","C","N"], 1),
 "C2H2": ("ethyne", ["acetylene"], "C2H2", ["C","C","H","H"], 1),
 "C2H4": ("ethene", ["ethylene"], "C2H4", ["C","C","H","H","H","H"], 1),
 "H2CO": ("formaldehyde", ["methanal"], "CH2O", ["C","O","H","H"], 1),
 "H2S":  ("hydrogen sulfide", [], "H2S", ["S","H","H"], 1),
 "PH3":  ("phosphine", [], "H3P", ["P","H","H","H"], 1),
 "SiH4": ("silane", [], "H4Si", ["Si","H","H","H","H"], 1),
 "CH3F": ("fluoromethane", ["methyl fluoride"], "CH3F", ["C","F","H","H","H"], 1),
 "CH3Cl":("chloromethane", ["methyl chloride"], "CH3Cl", ["C","Cl","H","H","H"], 1),
 "OCS":  ("carbonyl sulfide", [], "COS", ["O","C","S"], 1),
 "N2O":  ("nitrous oxide", ["dinitrogen monoxide"], "N2O", ["N","N","O"], 1),
 "SO2":  ("sulfur dioxide", [], "O2S", ["S","O","O"], 1),
}

def mol(k):
    name, al, f, atoms, mult = M[k]
    d = {"name": name, "formula": f, "atoms": atoms}
    al = list(al) + ([k] if k != f else [])
    if al: d["aliases"] = al
    if mult != 1: d["multiplicity"] = mult
    return d

def sym(k, i): return M[k][3][i]

def entry(eid, k, q, v, unit, unc, src, note=None):
    e = {"id": eid, "molecule": mol(k), "quantity": q, "value": v, "unit": unit,
         "uncertainty": unc, "kind": "experiment", "source": src, "from_memory": True}
    if note: e["note"] = note
    return e

S = []
def bond(k, i, j, v, unc, src, note=None):
    a, b = sym(k,i), sym(k,j)
    S.append(entry(f"{k}.r.{a}{i}-{b}{j}".lower(), k, {"kind": "bond_length", "atoms": [i, j]}, v, "angstrom", unc, src, note))
def angle(k, i, j, l, v, unc, src, note=None):
    S.append(entry(f"{k}.a.{sym(k,i)}{i}-{sym(k,j)}{j}-{sym(k,l)}{l}".lower(), k, {"kind": "angle", "atoms": [i, j, l]}, v, "deg", unc, src, note))

RE = "equilibrium distance r_e"
bond("H2", 0, 1, 0.74144, 0.00002, HH, RE)
bond("HF", 0, 1, 0.91680, 0.00005, HH, RE)
bond("HCl", 0, 1, 1.27455, 0.00005, HH, RE)
bond("CO", 0, 1, 1.12832, 0.00002, HH, RE)
bond("N2", 0, 1, 1.09768, 0.00002, HH, RE)
bond("F2", 0, 1, 1.41193, 0.0001, HH, RE)
bond("Cl2", 0, 1, 1.9872, 0.0002, HH, RE)
bond("LiH", 0, 1, 1.5949, 0.0002, HH, RE)
bond("LiF", 0, 1, 1.5639, 0.0002, HH, RE)
bond("NaCl", 0, 1, 2.3609, 0.0002, HH, RE)
bond("CS", 0, 1, 1.5349, 0.0002, HH, RE)
bond("PN", 0, 1, 1.4909, 0.0002, HH, RE)
bond("OH", 0, 1, 0.9697, 0.0002, HH, RE + "; X 2Π ground state (open shell)")
bond("H2O", 0, 1, 0.9578, 0.0005, "A. R. Hoy and P. R. Bunker, J. Mol. Spectrosc. 74, 1 (1979)", "r_e from the rovibrational potential")
angle("H2O", 1, 0, 2, 104.48, 0.1, "A. R. Hoy and P. R. Bunker, J. Mol. Spectrosc. 74, 1 (1979)", "θ_e")
bond("NH3", 0, 1, 1.012, 0.002, CCC, "r_e")
angle("NH3", 1, 0, 2, 106.7, 0.3, CCC, "θ_e")
bond("CH4", 0, 1, 1.086, 0.002, CCC, "r_e")
bond("CO2", 0, 1, 1.1600, 0.0005, LB, "r_e")
bond("HCN", 0, 1, 1.0655, 0.001, LB, "r_e")
bond("HCN", 1, 2, 1.1532, 0.0005, LB, "r_e")
bond("C2H2", 0, 1, 1.2030, 0.0005, LB, "r_e")
bond("C2H2", 0, 2, 1.0618, 0.001, LB, "r_e")
bond("C2H4", 0, 1, 1.3307, 0.001, LB, "r_e")
bond("C2H4", 0, 2, 1.0809, 0.001, LB, "r_e; H atoms 2 and 3 are bonded to C0, 4 and 5 to C1")
angle("C2H4", 2, 0, 3, 117.1, 0.3, LB, "θ_e")
bond("H2CO", 0, 1, 1.2033, 0.001, LB, "r_e")
bond("H2CO", 0, 2, 1.1005, 0.002, LB, "r_e")
angle("H2CO", 2, 0, 3, 116.3, 0.5, LB, "θ_e")
bond("H2S", 0, 1, 1.3356, 0.0005, LB, "r_e")
angle("H2S", 1, 0, 2, 92.11, 0.1, LB, "θ_e")
bond("PH3", 0, 1, 1.4116, 0.002, CCC, "r_e")
angle("PH3", 1, 0, 2, 93.4, 0.3, CCC, "θ_e")
bond("SiH4", 0, 1, 1.4741, 0.003, CCC, "r_e")
bond("CH3F", 0, 1, 1.383, 0.002, LB, "r_e")
bond("CH3F", 0, 2, 1.086, 0.002, LB, "r_e")
angle("CH3F", 1, 0, 2, 108.8, 0.3, LB, "θ_e (F–C–H)")
bond("CH3Cl", 0, 1, 1.776, 0.002, LB, "r_e")
bond("CH3Cl", 0, 2, 1.085, 0.002, LB, "r_e")
angle("CH3Cl", 1, 0, 2, 108.6, 0.3, LB, "θ_e (Cl–C–H)")
bond("OCS", 0, 1, 1.1543, 0.001, LB, "r_e")
bond("OCS", 1, 2, 1.5628, 0.001, LB, "r_e")
bond("N2O", 0, 1, 1.1273, 0.001, LB, "r_e (terminal N–central N)")
bond("N2O", 1, 2, 1.1851, 0.001, LB, "r_e (central N–O)")
bond("SO2", 0, 1, 1.4308, 0.001, LB, "r_e")
angle("SO2", 1, 0, 2, 119.33, 0.1, LB, "θ_e")

P = []
def mu(k, v, unc, src, note=None):
    P.append(entry(f"{k}.mu".lower(), k, {"kind": "dipole_magnitude"}, v, "D", unc, src, note))
def muax(k, frm, to, v, unc, src, note):
    P.append(entry(f"{k}.mu-axis".lower(), k, {"kind": "dipole_component", "axis": {"from": frm, "to": to}}, v, "D", unc, src, note))
def quad(k, comp, frame, v, unc, src, note=None):
    P.append(entry(f"{k}.theta-{comp}".lower(), k, {"kind": "quadrupole_component", "frame": frame, "component": comp, "origin": "centre-of-mass"}, v, "D·Å", unc, src, note))

G = "ground vibrational state (vibrationally averaged), gas phase"
muax("CO", [0], [1], 0.1098, 0.0005, "magnitude: J. S. Muenter, J. Mol. Spectrosc. 55, 490 (1975); polarity C⁻O⁺: B. Rosenblum, A. H. Nethercot and C. H. Townes, Phys. Rev. 109, 400 (1958)",
     "component along the axis from C to O; positive means the dipole points from C to O, i.e. C is the negative end (C⁻O⁺). Dipole convention: from negative to positive charge. " + G)
mu("CO", 0.1098, 0.0005, "J. S. Muenter, J. Mol. Spectrosc. 55, 490 (1975)", G)
muax("HF", [1], [0], 1.8262, 0.0005, NLM, "along the axis from F to H: H is the positive end (H⁺F⁻). " + G)
muax("HCl", [1], [0], 1.1086, 0.0005, NLM, "along the axis from Cl to H: H is the positive end. " + G)
muax("LiH", [1], [0], 5.884, 0.005, NLM, "along the axis from H to Li: Li is the positive end (Li⁺H⁻). " + G)
mu("LiF", 6.3274, 0.001, NLM, G)
mu("NaCl", 9.001, 0.005, CRC, G)
mu("CS", 1.958, 0.005, CRC, G)
mu("PN", 2.747, 0.01, CRC, G)
mu("OH", 1.6676, 0.001, CRC, G + "; X 2Π ground state (open shell)")
muax("H2O", [0], [1, 2], 1.8546, 0.0006, "S. A. Clough, Y. Beers, G. P. Klein and L. S. Rothman, J. Chem. Phys. 59, 2254 (1973)",
     "along the C2 axis from O towards the midpoint of the H atoms: the H atoms are the positive end. " + G)
muax("NH3", [0], [1, 2, 3], 1.4718, 0.002, NLM, "along the C3 axis from N towards the centroid of the H atoms: the H atoms are the positive end. " + G)
muax("HCN", [2], [0], 2.985, 0.003, NLM, "along the axis from N to H: H is the positive end. " + G)
muax("H2CO", [1], [0], 2.332, 0.002, NLM, "along the C2 axis from O to C: O is the negative end. " + G)
mu("H2S", 0.978, 0.005, NLM, G)
mu("PH3", 0.574, 0.005, NLM, G)
muax("CH3F", [1], [0], 1.8585, 0.0005, NLM, "along the C3 axis from F to C: F is the negative end. " + G)
muax("CH3Cl", [1], [0], 1.8963, 0.002, NLM, "along the C3 axis from Cl to C: Cl is the negative end. " + G)
mu("OCS", 0.7152, 0.0002, NLM, G)
mu("N2O", 0.1608, 0.0002, NLM, G + "; polarity not recorded here")
muax("SO2", [1, 2], [0], 1.633, 0.001, NLM, "along the C2 axis from the midpoint of the O atoms to S: S is the positive end. " + G)

lin = lambda a, b: {"z": {"from": [a], "to": [b]}}
quad("H2", "zz", lin(0, 1), 0.65, 0.03, GG, "molecular axis; about the centre of mass")
quad("N2", "zz", lin(0, 1), -1.52, 0.05, GG + " (gas-phase birefringence)", "molecular axis; about the centre of mass")
quad("CO", "zz", lin(0, 1), -2.0, 0.2, GG, "molecular axis; about the centre of mass (origin-dependent: CO is polar)")
quad("CO2", "zz", lin(0, 1), -4.3, 0.2, GG + " (gas-phase birefringence)", "molecular axis; about the centre of mass")
quad("HF", "zz", lin(1, 0), 2.36, 0.05, GG, "molecular axis; about the centre of mass (origin-dependent: HF is polar)")
quad("HCl", "zz", lin(1, 0), 3.8, 0.2, GG, "molecular axis; about the centre of mass (origin-dependent: HCl is polar)")
quad("N2O", "zz", lin(0, 2), -3.0, 0.3, GG, "molecular axis; about the centre of mass")
wf = {"z": {"from": [0], "to": [1, 2]}, "x": {"from": [1], "to": [2]}}
VD = "J. Verhoeven and A. Dymanus, J. Chem. Phys. 52, 3222 (1970)"
quad("H2O", "xx", wf, 2.63, 0.02, VD, "x in the molecular plane perpendicular to the C2 axis; about the centre of mass (origin-dependent: water is polar)")
quad("H2O", "yy", wf, -2.50, 0.02, VD, "y perpendicular to the molecular plane; about the centre of mass")
quad("H2O", "zz", wf, -0.13, 0.03, VD, "z along the C2 axis; about the centre of mass")
quad("NH3", "zz", {"z": {"from": [0], "to": [1, 2, 3]}}, -2.32, 0.07, GG, "z along the C3 axis; about the centre of mass (origin-dependent: ammonia is polar)")

MEM = ("Every value here was recalled from the cited compilation, not transcribed from it (from_memory is true on every entry); "
       "check a value against its source before relying on it in a publication.")
json.dump({"format": "moltrail-refset/1", "name": "structures-exp",
  "description": "Experimental equilibrium structures (r_e bond lengths, θ_e angles) of small first- and second-row molecules. " + MEM,
  "source": "Huber & Herzberg (diatomics); Landolt–Börnstein II and NIST CCCBDB (polyatomics); individual sources per entry",
  "entries": S}, open(os.path.join(HERE, "structures-exp.json"), "w"), ensure_ascii=False, indent=1)
json.dump({"format": "moltrail-refset/1", "name": "moments-exp",
  "description": "Experimental gas-phase electric dipole moments (magnitudes, and signed components along molecule-fixed axes where the polarity is established) and traceless quadrupole moments (Buckingham convention, about the centre of mass) of small molecules. The experimental values are vibrationally averaged; computed values are at one geometry. " + MEM,
  "source": "Nelson, Lide & Maryott NSRDS-NBS 10 and the CRC Handbook (dipoles); Gray & Gubbins and individual measurements (quadrupoles); sources per entry",
  "entries": P}, open(os.path.join(HERE, "moments-exp.json"), "w"), ensure_ascii=False, indent=1)
print(len(S), len(P), len({e["molecule"]["formula"] for e in S+P}))

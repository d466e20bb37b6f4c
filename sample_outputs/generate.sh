#!/usr/bin/env bash
# Re-create every output in sample_outputs/ from sample_outputs/inputs/.
#
# Needs NWChem 7.0.2 and xTB 6.5.1 (Debian: apt-get install nwchem xtb) and awk. Each job runs in its own
# scratch directory; only the main output is kept (NWChem's .out, xTB's captured stdout). Wall times are
# appended to timings.tsv. The flawed files under flawed/ are made here too (see README.md).
#
#   ./generate.sh            everything
#   ./generate.sh gas sp     only some parts: gas solvent sp atoms conformers flawed solution rotors
#
# NWChem runs as one process (plain `nwchem x.nw`); set NWCHEM="mpirun -np 2 nwchem" to use two cores.
set -euo pipefail

here=$(cd "$(dirname "$0")" && pwd)
NWCHEM=${NWCHEM:-nwchem}
scratch=$(mktemp -d)
trap 'rm -rf "$scratch"' EXIT
timings="$here/timings.tsv"

now() { date +%s.%N; }

record_time() { # record_time REL START
    awk -v rel="$1" -v t0="$2" -v t1="$(now)" 'BEGIN { printf "%s\t%.1f\n", rel, t1 - t0 }' >> "$timings"
}

nwchem_job() { # nwchem_job gas/ch4 : inputs/gas/ch4.nw -> gas/ch4.out
    local rel=$1 name dir t0
    name=$(basename "$rel")
    dir="$scratch/$rel"
    mkdir -p "$dir" "$here/$(dirname "$rel")"
    cp "$here/inputs/$rel.nw" "$dir/"
    t0=$(now)
    # flawed jobs stop on purpose; their output is the data, so a non-zero status is not fatal
    (cd "$dir" && $NWCHEM "$name.nw" > "$name.out" 2> "$name.err") || echo "  $rel: NWChem exit status $?"
    record_time "$rel" "$t0"
    mv "$dir/$name.out" "$here/$rel.out"
    rm -rf "$dir"
}

xtb_job() { # xtb_job conformers/pentane_tt : inputs/conformers/pentane_tt.xyz -> conformers/pentane_tt.out
    local rel=$1 name dir t0
    name=$(basename "$rel")
    dir="$scratch/$rel"
    mkdir -p "$dir" "$here/$(dirname "$rel")"
    cp "$here/inputs/$rel.xyz" "$dir/"
    t0=$(now)
    (cd "$dir" && OMP_NUM_THREADS=1 xtb "$name.xyz" --gfn 2 --ohess tight > "$name.out" 2> "$name.err")
    record_time "$rel" "$t0"
    mv "$dir/$name.out" "$here/$rel.out"
    rm -rf "$dir"
}

final_geometry() { # final_geometry FILE.out : the last "Output coordinates in angstroms" block as "Sym x y z"
    awk '/Output coordinates in angstroms/ { n = 0; delete g; grab = 1; skip = 3; next }
         grab && skip > 0 { skip--; next }
         grab && NF == 6 && $1 ~ /^[0-9]+$/ { g[++n] = sprintf(" %-2s %15.8f %15.8f %15.8f", $2, $4, $5, $6); next }
         grab { grab = 0; last = n; for (i = 1; i <= n; i++) keep[i] = g[i] }
         END { for (i = 1; i <= last; i++) print keep[i] }' "$1"
}

write_mp2_input() { # write_mp2_input NAME MULT : MP2/cc-pVTZ single point on the geometry of gas/NAME.out
    local name=$1 mult=$2 ref
    case $mult in
        1) ref="rhf singlet" ;;
        2) ref="uhf doublet" ;;
        3) ref="uhf triplet" ;;
        4) ref="uhf quartet" ;;
    esac
    {
        echo "start ${name}_mp2"
        echo "title \"$name, MP2/cc-pVTZ single point on the B3LYP/6-31G* geometry of gas/$name.out\""
        echo "charge 0"
        echo "geometry units angstrom noautoz"
        final_geometry "$here/gas/$name.out"
        echo "end"
        echo "basis spherical"
        echo " * library cc-pVTZ"
        echo "end"
        echo "scf"
        echo " ${ref% *}"
        echo " ${ref#* }"
        echo "end"
        echo "mp2"
        echo " freeze atomic"
        echo "end"
        echo "task mp2 energy"
    } > "$here/inputs/sp/${name}_mp2.nw"
}

part_gas() {
    for job in ch4 h_atom ch3 h2 ts_abstraction hcn hnc ts_hcn o2 water; do
        nwchem_job "gas/$job"
    done
}

part_solvent() {
    for job in water formaldehyde methanediol ts_hydration; do
        nwchem_job "solvent/$job"
    done
}

part_sp() {
    # the geometries are copied from the B3LYP outputs, so the inputs are written here, then run
    write_mp2_input ch4 1
    write_mp2_input h_atom 2
    write_mp2_input ts_abstraction 2
    write_mp2_input ch3 2
    write_mp2_input h2 1
    write_mp2_input o2 3
    write_mp2_input water 1
    for job in ch4 h_atom ts_abstraction ch3 h2 o2 water; do
        nwchem_job "sp/${job}_mp2"
    done
}

part_atoms() {
    # free atoms in their ground states (C 3P, N 4S, O 3P) at both levels of the gas-phase species, for the
    # atomization route to heats of formation (H is gas/h_atom and sp/h_atom_mp2 of the gas and sp parts)
    for job in c_atom n_atom o_atom; do
        nwchem_job "gas/$job"
    done
    write_mp2_input c_atom 3
    write_mp2_input n_atom 4
    write_mp2_input o_atom 3
    for job in c_atom n_atom o_atom; do
        nwchem_job "sp/${job}_mp2"
    done
}

write_solution_sp_input() { # write_solution_sp_input SRC NAME CHARGE MULT SOLVENT : B3LYP/6-31+G* single point
    # on the final geometry of SRC.out, in COSMO water (SOLVENT=cosmo) or in the gas phase (SOLVENT=gas)
    local src=$1 name=$2 charge=$3 mult=$4 solvent=$5 where
    where="in the gas phase"
    [ "$solvent" = cosmo ] && where="in COSMO water"
    {
        echo "start ${name}_${solvent}"
        echo "title \"$name, B3LYP/6-31+G* single point $where on the B3LYP/6-31G* geometry of $src.out\""
        echo "charge $charge"
        echo "geometry units angstrom noautoz"
        final_geometry "$here/$src.out"
        echo "end"
        echo "basis"
        echo " * library 6-31+G*"
        echo "end"
        echo "dft"
        echo " xc b3lyp"
        echo " mult $mult"
        echo "end"
        [ "$solvent" = cosmo ] && printf 'cosmo\n solvent water\nend\n'
        echo "task dft energy"
    } > "$here/inputs/solution/sp/${name}_${solvent}.nw"
}

part_solution() {
    # gas-phase structures and frequencies, then single points in COSMO water and in the gas phase at one
    # higher level on each final geometry (the solvent single-point protocol and the thermodynamic cycle)
    for job in formic_acid formate acetic_acid acetate no2 nitrite; do
        nwchem_job "solution/$job"
    done
    mkdir -p "$here/inputs/solution/sp"
    local spec src name charge mult solvent
    for spec in "solution/formic_acid formic_acid 0 1" "solution/formate formate -1 1" \
                "solution/acetic_acid acetic_acid 0 1" "solution/acetate acetate -1 1" \
                "solution/no2 no2 0 2" "solution/nitrite nitrite -1 1"; do
        read -r src name charge mult <<< "$spec"
        for solvent in cosmo gas; do
            write_solution_sp_input "$src" "$name" "$charge" "$mult" "$solvent"
            nwchem_job "solution/sp/${name}_${solvent}"
        done
    done
}

part_rotors() {
    # ethane: opt + freq, and a relaxed scan of its torsion (one constrained optimisation per point)
    nwchem_job gas/ethane
    nwchem_job scans/ethane_rot1
}

part_conformers() {
    for xyz in "$here"/inputs/conformers/*.xyz; do
        xtb_job "conformers/$(basename "$xyz" .xyz)"
    done
}

part_flawed() {
    # a job killed mid-way: the first 60 % of the bytes of a finished saddle-search + frequency output
    local src="$here/gas/ts_abstraction.out"
    mkdir -p "$here/flawed"
    head -c $(( $(wc -c < "$src") * 60 / 100 )) "$src" > "$here/flawed/ts_abstraction_killed.out"
    for job in methanol_maxiter hnc_hf; do
        nwchem_job "flawed/$job"
    done
    # a "minimum" left at a symmetric start: the nearly free methyl torsion comes out imaginary
    xtb_job flawed/butyne_eclipsed
}

parts=("$@")
[ ${#parts[@]} -eq 0 ] && parts=(gas solvent sp atoms conformers flawed solution rotors)
for part in "${parts[@]}"; do
    echo "== $part"
    "part_$part"
done

#!/bin/sh
# Regenerates every reference file in this folder, in dependency order, with Debian's R and
# python3 (not a pyenv or conda python: numpy/scipy versions are part of the provenance).
set -eu
cd "$(dirname "$0")"
/usr/bin/Rscript make_harman74.R
/usr/bin/Rscript make_harman74_rotation.R
/usr/bin/Rscript make_ability.R
/usr/bin/Rscript make_eustock.R
/usr/bin/python3 make_eustock_pca.py
/usr/bin/Rscript make_eustock_ml.R
/usr/bin/Rscript make_eustock_risk.R
/usr/bin/python3 make_eustock_risk.py
/usr/bin/Rscript make_factor_scores.R
/usr/bin/Rscript make_chi_square_sf.R
/usr/bin/python3 make_chi_square_sf.py
/usr/bin/python3 make_procrustes.py
echo "reference files regenerated; review 'git diff' (only the 'generated:' dates should change)"

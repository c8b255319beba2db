#!/bin/sh
# Regenerate the demo logs and machine profiles in sample_data/ (invented Brindlemoor
# Works machines). Runs from the repository root whatever the current directory.
set -e
cd "$(dirname "$0")/.."
command -v torqlog >/dev/null 2>&1 || torqlog() { python -m torqlog "$@"; }

torqlog simulate press -o sample_data/press_comma.csv --duration 60 --rate 1000 --channels torque,speed --dialect comma --profile-out sample_data/press.toml
torqlog simulate compressor -o sample_data/compressor_semicolon.csv --duration 20 --rate 2000 --channels torque,speed,angle --dialect semicolon --profile-out sample_data/compressor.toml
torqlog simulate engine -o sample_data/engine_preamble.txt --duration 10 --rate 5000 --channels torque,index --dialect preamble --profile-out sample_data/engine.toml
torqlog simulate press -o sample_data/press_counts_iso.csv --duration 30 --rate 1000 --channels torque,counts --dialect iso
torqlog simulate press -o sample_data/press_gaps_spikes.csv --duration 60 --rate 1000 --channels torque,speed --dialect comma --gaps 2 --spikes 3 --seed 1

#!/usr/bin/env bash
# Scenario benchmark: skein's baselines and graph networks on invented
# cohorts whose score follows a known truth (linear in functional edges,
# linear in structural edges, a propagated S·F·Sᵀ feature, node-wise
# structure–function coupling, products of functional and structural
# edges in a block of regions, and a null), one table per scenario with
# the generator's oracle r. See bench/cmd/scenarios and bench/scenario.
#
# usage: bench/scenarios.sh [flags of scenarios]   (from anywhere)
#   bench/scenarios.sh -quick                       smoke run, about 2 minutes of CPU
#   bench/scenarios.sh -n 300 -p 60 -baselines-only
#   bench/scenarios.sh -n 300 -p 60 -models examples/networks.toml
set -euo pipefail
cd "$(dirname "$0")/.."
echo "load before: $(uptime)"
go run ./bench/cmd/scenarios "$@"
echo "load after: $(uptime)"

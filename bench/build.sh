# Sourced by the scripts of bench/: build_refnet DIR builds bench/cmd/refnet
# twice into DIR:
#   refnet-gonum     the pure-Go build, as `go build` makes it;
#   refnet-openblas  the fast build: products through OpenBLAS and, unless
#                    VECTOR=0, the element loops on vectors
#                    (GOEXPERIMENT=simd, package internal/vec).
build_refnet() {
  local experiment=simd
  [[ ${VECTOR:-1} == 0 ]] && experiment=
  go build -o "$1/refnet-gonum" ./bench/cmd/refnet
  GOEXPERIMENT=$experiment CGO_LDFLAGS=-lopenblas go build -tags openblas -o "$1/refnet-openblas" ./bench/cmd/refnet
}

//go:build openblas

package lapack

/*
#cgo LDFLAGS: -lopenblas
#include <stddef.h>

// LAPACK's Fortran routines as OpenBLAS exports them: every argument by
// reference, then the hidden length of each character argument.
void dsytrd_(const char *uplo, const int *n, double *a, const int *lda, double *d, double *e, double *tau, double *work, const int *lwork, int *info, size_t uplo_len);
void dormtr_(const char *side, const char *uplo, const char *trans, const int *m, const int *n, const double *a, const int *lda, const double *tau, double *c, const int *ldc, double *work, const int *lwork, int *info, size_t side_len, size_t uplo_len, size_t trans_len);
void dorgtr_(const char *uplo, const int *n, double *a, const int *lda, const double *tau, double *work, const int *lwork, int *info, size_t uplo_len);
*/
import "C"

import (
	"fmt"
	"unsafe"
)

// Name tells which LAPACK is in use: "gonum" (pure Go) or "openblas".
const Name = "openblas"

// The routines see a row-major matrix as its transpose in column-major
// order. A is symmetric, so dsytrd reduces the same matrix; the row-major
// lower triangle (i > j at a[i·lda+j]) is the column-major upper triangle,
// so every call says 'U'.

var (
	charU = C.char('U')
	charR = C.char('R')
	charN = C.char('N')
	charT = C.char('T')
)

func check(routine string, info C.int) {
	if info != 0 {
		panic(fmt.Sprintf("lapack: %s returned info %d", routine, int(info)))
	}
}

// reduce runs dsytrd with uplo 'U' on the column-major view, which is the
// row-major lower triangle: the reflectors land where Reduce says.
func reduce(t *Tridiagonal) {
	n, lda := C.int(t.N), C.int(t.lda)
	var info C.int
	var query C.double
	lwork := C.int(-1)
	a := (*C.double)(unsafe.Pointer(&t.a[0]))
	d := (*C.double)(unsafe.Pointer(&t.D[0]))
	e := (*C.double)(unsafe.Pointer(&t.E[0:1][0]))
	tau := (*C.double)(unsafe.Pointer(&t.tau[0]))
	C.dsytrd_(&charU, &n, a, &lda, d, e, tau, &query, &lwork, &info, 1)
	check("dsytrd", info)
	work := make([]float64, max(1, int(query)))
	lwork = C.int(len(work))
	C.dsytrd_(&charU, &n, a, &lda, d, e, tau, (*C.double)(unsafe.Pointer(&work[0])), &lwork, &info, 1)
	check("dsytrd", info)
}

// mulQ: C row-major (n × cols) is Cᵀ column-major (cols × n), and
// Q·C = (Cᵀ·Qᵀ)ᵀ, so Q is applied from the right, transposed the other way.
func mulQ(t *Tridiagonal, trans bool, cols int, c []float64, ldc int) {
	m, n, lda, ldcC := C.int(cols), C.int(t.N), C.int(t.lda), C.int(ldc)
	tr := charT
	if trans {
		tr = charN
	}
	var info C.int
	var query C.double
	lwork := C.int(-1)
	a := (*C.double)(unsafe.Pointer(&t.a[0]))
	tau := (*C.double)(unsafe.Pointer(&t.tau[0]))
	cp := (*C.double)(unsafe.Pointer(&c[0]))
	C.dormtr_(&charR, &charU, &tr, &m, &n, a, &lda, tau, cp, &ldcC, &query, &lwork, &info, 1, 1, 1)
	check("dormtr", info)
	work := make([]float64, max(1, int(query)))
	lwork = C.int(len(work))
	C.dormtr_(&charR, &charU, &tr, &m, &n, a, &lda, tau, cp, &ldcC, (*C.double)(unsafe.Pointer(&work[0])), &lwork, &info, 1, 1, 1)
	check("dormtr", info)
}

// formQ: dorgtr writes Q column-major, which row-major is Qᵀ; transpose it.
func formQ(t *Tridiagonal, q []float64) {
	n := C.int(t.N)
	var info C.int
	var query C.double
	lwork := C.int(-1)
	tau := (*C.double)(unsafe.Pointer(&t.tau[0]))
	qp := (*C.double)(unsafe.Pointer(&q[0]))
	C.dorgtr_(&charU, &n, qp, &n, tau, &query, &lwork, &info, 1)
	check("dorgtr", info)
	work := make([]float64, max(1, int(query)))
	lwork = C.int(len(work))
	C.dorgtr_(&charU, &n, qp, &n, tau, (*C.double)(unsafe.Pointer(&work[0])), &lwork, &info, 1)
	check("dorgtr", info)
	for i := 0; i < t.N; i++ {
		for j := i + 1; j < t.N; j++ {
			q[i*t.N+j], q[j*t.N+i] = q[j*t.N+i], q[i*t.N+j]
		}
	}
}

/* reduced.h — the reduced nodal form as a solver backend. */
#ifndef LS_REDUCED_H
#define LS_REDUCED_H

#include "solve/solver.h"

/* Reduced nodal form (reduced.c): a backend that solves the MNA system of resistors,
 * current sources and voltage sources through a symmetric positive definite
 * system of the free node voltages, factored by CHOLMOD.  Sources without rs
 * between ground and a node fix that node; sources with rs are
 * Norton-converted.  It solves the same A as the other backends (plain or
 * transposed), so the unknown layout and ls_op.x are unchanged. */
extern const ls_backend ls_backend_reduced;
/* 1 when the MNA matrix a has that shape (nodes, then source branches whose
 * rows mirror their KCL columns with opposite sign, a symmetric node block),
 * else 0.  O(nnz log). */
int ls_mna_reducible(const ls_csc *a);

#endif

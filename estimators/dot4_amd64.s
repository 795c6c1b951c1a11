//go:build !purego

#include "textflag.h"

// func dot4AVX(w, c0, c1, c2, c3 *float64, n int, out *[4]float64)
//
// out[j] = Σ_{i<n} w[i]·c_j[i], four lanes per column summed in row order
// (row i into lane i mod 4, the n mod 4 last rows into lane 0), the lanes
// then added as (l0 + l1) + (l2 + l3).
TEXT ·dot4AVX(SB), NOSPLIT, $0-56
	MOVQ w+0(FP), SI
	MOVQ c0+8(FP), R8
	MOVQ c1+16(FP), R9
	MOVQ c2+24(FP), R10
	MOVQ c3+32(FP), R11
	MOVQ n+40(FP), CX
	MOVQ out+48(FP), DI
	VXORPD Y0, Y0, Y0
	VXORPD Y1, Y1, Y1
	VXORPD Y2, Y2, Y2
	VXORPD Y3, Y3, Y3
	XORQ AX, AX
	MOVQ CX, DX
	ANDQ $-4, DX
	JZ   tail

loop:
	VMOVUPD (SI)(AX*8), Y4
	VMULPD  (R8)(AX*8), Y4, Y5
	VADDPD  Y5, Y0, Y0
	VMULPD  (R9)(AX*8), Y4, Y6
	VADDPD  Y6, Y1, Y1
	VMULPD  (R10)(AX*8), Y4, Y7
	VADDPD  Y7, Y2, Y2
	VMULPD  (R11)(AX*8), Y4, Y8
	VADDPD  Y8, Y3, Y3
	ADDQ    $4, AX
	CMPQ    AX, DX
	JL      loop

tail:
	CMPQ AX, CX
	JGE  reduce

tailloop:
	VMOVSD (SI)(AX*8), X4
	VMULSD (R8)(AX*8), X4, X5
	VADDSD X5, X0, X9
	VBLENDPD $1, Y9, Y0, Y0
	VMULSD (R9)(AX*8), X4, X6
	VADDSD X6, X1, X9
	VBLENDPD $1, Y9, Y1, Y1
	VMULSD (R10)(AX*8), X4, X7
	VADDSD X7, X2, X9
	VBLENDPD $1, Y9, Y2, Y2
	VMULSD (R11)(AX*8), X4, X8
	VADDSD X8, X3, X9
	VBLENDPD $1, Y9, Y3, Y3
	INCQ   AX
	CMPQ   AX, CX
	JL     tailloop

reduce:
	// (l0 + l1) + (l2 + l3) for each accumulator.
	VEXTRACTF128 $1, Y0, X4
	VHADDPD      X0, X0, X0
	VHADDPD      X4, X4, X4
	VADDSD       X4, X0, X0
	VEXTRACTF128 $1, Y1, X5
	VHADDPD      X1, X1, X1
	VHADDPD      X5, X5, X5
	VADDSD       X5, X1, X1
	VEXTRACTF128 $1, Y2, X6
	VHADDPD      X2, X2, X2
	VHADDPD      X6, X6, X6
	VADDSD       X6, X2, X2
	VEXTRACTF128 $1, Y3, X7
	VHADDPD      X3, X3, X3
	VHADDPD      X7, X7, X7
	VADDSD       X7, X3, X3
	VMOVSD       X0, 0(DI)
	VMOVSD       X1, 8(DI)
	VMOVSD       X2, 16(DI)
	VMOVSD       X3, 24(DI)
	VZEROUPPER
	RET

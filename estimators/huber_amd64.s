//go:build !purego

#include "textflag.h"

DATA huberAbs<>+0(SB)/8, $0x7fffffffffffffff
GLOBL huberAbs<>(SB), RODATA|NOPTR, $8
DATA huberOne<>+0(SB)/8, $1.0
GLOBL huberOne<>(SB), RODATA|NOPTR, $8

// HUBERACC adds row i's terms: csum += c_i (the low lane of Xc), then
// h[0:4] += pi·x_i[0:4] (Yp holding pi in every lane, Xp's low lane the
// same) and h[4] += pi·x_i[4]; R10 moves to the next row.
#define HUBERACC(Xc, Yp, Xp) \
	VADDSD Xc, X8, X8; \
	VMULPD (R10), Yp, Y7; \
	VADDPD Y7, Y10, Y10; \
	VMULSD 32(R10), Xp, X7; \
	VADDSD X7, X9, X9; \
	ADDQ   R11, R10

// HUBEROFF appends row AX + lane to offs when bit lane of R12 is set,
// without a branch.
#define HUBEROFF(lane) \
	LEAQ lane(AX), R13; \
	MOVQ R13, (R9)(BX*8); \
	MOVQ R12, R14; \
	SHRQ $lane, R14; \
	ANDQ $1, R14; \
	ADDQ R14, BX

// func huberSums5AVX(r, c, ps *float64, offs *int, data *float64, n, stride int, k, sigma float64, h *[5]float64) (csum float64, off int)
//
// huberSums5 by AVX instructions: each row's values by the same
// operations as the Go loop, its sums added in row order.
TEXT ·huberSums5AVX(SB), NOSPLIT, $0-96
	MOVQ         r+0(FP), SI
	MOVQ         c+8(FP), DI
	MOVQ         ps+16(FP), R8
	MOVQ         offs+24(FP), R9
	MOVQ         data+32(FP), R10
	MOVQ         n+40(FP), CX
	MOVQ         stride+48(FP), R11
	SHLQ         $3, R11
	VBROADCASTSD k+56(FP), Y14
	VXORPD       Y13, Y13, Y13
	VSUBPD       Y14, Y13, Y13 // −k
	VBROADCASTSD sigma+64(FP), Y15
	VBROADCASTSD huberAbs<>(SB), Y12
	VBROADCASTSD huberOne<>(SB), Y11
	VXORPD       Y10, Y10, Y10 // h[0:4]
	VXORPD       X9, X9, X9    // h[4]
	VXORPD       X8, X8, X8    // csum
	XORQ         BX, BX
	XORQ         AX, AX
	MOVQ         CX, DX
	ANDQ         $-4, DX
	JZ           htail

hloop:
	VMOVUPD   (SI)(AX*8), Y0
	VDIVPD    Y15, Y0, Y0       // u = r/sigma
	VCMPPD    $0x1e, Y14, Y0, Y1 // u > k
	VCMPPD    $0x11, Y13, Y0, Y2 // u < −k
	VBLENDVPD Y1, Y14, Y0, Y3   // pi = k where u > k, else u
	VBLENDVPD Y2, Y13, Y3, Y3   // −k where u < −k
	VMOVUPD   Y3, (R8)(AX*8)
	VORPD     Y1, Y2, Y4        // outside [−k, k]
	VANDPD    Y12, Y0, Y5       // |u|
	VDIVPD    Y5, Y14, Y6       // k/|u|
	VBLENDVPD Y4, Y6, Y11, Y6   // c = k/|u| outside, else 1
	VMOVUPD   Y6, (DI)(AX*8)
	VMOVMSKPD Y4, R12
	HUBEROFF(0)
	HUBEROFF(1)
	HUBEROFF(2)
	HUBEROFF(3)

	// Row AX: lane 0.
	VMOVDDUP     X3, X1
	VINSERTF128  $1, X1, Y1, Y1
	HUBERACC(X6, Y1, X1)
	// Row AX+1: lane 1.
	VPERMILPD    $3, X3, X1
	VINSERTF128  $1, X1, Y1, Y1
	VPERMILPD    $1, X6, X2
	HUBERACC(X2, Y1, X1)
	// Rows AX+2 and AX+3: lanes 2 and 3.
	VEXTRACTF128 $1, Y3, X5
	VEXTRACTF128 $1, Y6, X4
	VMOVDDUP     X5, X1
	VINSERTF128  $1, X1, Y1, Y1
	HUBERACC(X4, Y1, X1)
	VPERMILPD    $3, X5, X1
	VINSERTF128  $1, X1, Y1, Y1
	VPERMILPD    $1, X4, X2
	HUBERACC(X2, Y1, X1)

	ADDQ $4, AX
	CMPQ AX, DX
	JL   hloop

htail:
	CMPQ AX, CX
	JGE  hdone

htailloop:
	VMOVSD    (SI)(AX*8), X0
	VDIVSD    X15, X0, X0
	VCMPSD    $0x1e, X14, X0, X1
	VCMPSD    $0x11, X13, X0, X2
	VBLENDVPD X1, X14, X0, X3
	VBLENDVPD X2, X13, X3, X3
	VMOVSD    X3, (R8)(AX*8)
	VORPD     X1, X2, X4
	VANDPD    X12, X0, X5
	VDIVSD    X5, X14, X6
	VBLENDVPD X4, X6, X11, X6
	VMOVSD    X6, (DI)(AX*8)
	VMOVMSKPD X4, R12
	HUBEROFF(0)
	VMOVDDUP    X3, X1
	VINSERTF128 $1, X1, Y1, Y1
	HUBERACC(X6, Y1, X1)
	INCQ AX
	CMPQ AX, CX
	JL   htailloop

hdone:
	MOVQ    h+72(FP), DX
	VMOVUPD Y10, (DX)
	VMOVSD  X9, 32(DX)
	VMOVSD  X8, csum+80(FP)
	MOVQ    BX, off+88(FP)
	VZEROUPPER
	RET

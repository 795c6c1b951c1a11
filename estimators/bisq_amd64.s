//go:build !purego

#include "textflag.h"

DATA bisqOne<>+0(SB)/8, $1.0
GLOBL bisqOne<>(SB), RODATA|NOPTR, $8

// func bisqWeightsAVX(r, w, wr *float64, n int, inv float64)
//
// With v = r_i·inv and t = max(1 − v², 0): w_i = t², wr_i = t²·r_i.
TEXT ·bisqWeightsAVX(SB), NOSPLIT, $0-40
	MOVQ         r+0(FP), SI
	MOVQ         w+8(FP), DI
	MOVQ         wr+16(FP), R8
	MOVQ         n+24(FP), CX
	VBROADCASTSD inv+32(FP), Y15
	VBROADCASTSD bisqOne<>(SB), Y14
	VXORPD       Y13, Y13, Y13
	XORQ         AX, AX
	MOVQ         CX, DX
	ANDQ         $-4, DX
	JZ           wtail

wloop:
	VMOVUPD (SI)(AX*8), Y0
	VMULPD  Y15, Y0, Y1
	VMULPD  Y1, Y1, Y1
	VSUBPD  Y1, Y14, Y1
	VMAXPD  Y1, Y13, Y1
	VMULPD  Y1, Y1, Y2
	VMOVUPD Y2, (DI)(AX*8)
	VMULPD  Y0, Y2, Y3
	VMOVUPD Y3, (R8)(AX*8)
	ADDQ    $4, AX
	CMPQ    AX, DX
	JL      wloop

wtail:
	CMPQ AX, CX
	JGE  wdone

wtailloop:
	VMOVSD (SI)(AX*8), X0
	VMULSD X15, X0, X1
	VMULSD X1, X1, X1
	VSUBSD X1, X14, X1
	VMAXSD X1, X13, X1
	VMULSD X1, X1, X2
	VMOVSD X2, (DI)(AX*8)
	VMULSD X0, X2, X3
	VMOVSD X3, (R8)(AX*8)
	INCQ   AX
	CMPQ   AX, CX
	JL     wtailloop

wdone:
	VZEROUPPER
	RET

// func bisqResidualSumsAVX(y, xt, beta *float64, p, n int, r *float64, inv, invW float64, sums *[3]float64)
//
// r_i = y_i − Σ_k beta_k·xt[k·n + i], subtracting in order of k; then with
// v = r_i·inv, t = max(1 − v², 0), u = r_i·invW, t_W = max(1 − u², 0):
// sums = (Σ 1 − t²·t, Σ v²·t², Σ 1 − t_W·t_W·t_W), each kept in four
// lanes by rows, added as (l0 + l1) + (l2 + l3), and the n mod 4 last rows
// added after in row order.
TEXT ·bisqResidualSumsAVX(SB), NOSPLIT, $0-72
	MOVQ         y+0(FP), SI
	MOVQ         xt+8(FP), BX
	MOVQ         beta+16(FP), R12
	MOVQ         p+24(FP), R13
	MOVQ         n+32(FP), CX
	MOVQ         r+40(FP), DI
	VBROADCASTSD inv+48(FP), Y15
	VBROADCASTSD invW+56(FP), Y12
	VBROADCASTSD bisqOne<>(SB), Y14
	VXORPD       Y13, Y13, Y13
	VXORPD       Y9, Y9, Y9
	VXORPD       Y10, Y10, Y10
	VXORPD       Y11, Y11, Y11
	MOVQ         CX, R14
	SHLQ         $3, R14 // bytes per column
	XORQ         AX, AX
	MOVQ         CX, DX
	ANDQ         $-4, DX
	JZ           stail

sloop:
	VMOVUPD (SI)(AX*8), Y0
	LEAQ    (BX)(AX*8), R9
	MOVQ    R12, R10
	MOVQ    R13, R11

skloop:
	VBROADCASTSD (R10), Y1
	VMULPD       (R9), Y1, Y1
	VSUBPD       Y1, Y0, Y0
	ADDQ         $8, R10
	ADDQ         R14, R9
	DECQ         R11
	JNZ          skloop

	VMOVUPD Y0, (DI)(AX*8)
	VMULPD  Y15, Y0, Y1
	VMULPD  Y1, Y1, Y1
	VSUBPD  Y1, Y14, Y2
	VMAXPD  Y2, Y13, Y2
	VMULPD  Y2, Y2, Y3
	VMULPD  Y2, Y3, Y4
	VSUBPD  Y4, Y14, Y4
	VADDPD  Y4, Y10, Y10
	VMULPD  Y3, Y1, Y5
	VADDPD  Y5, Y11, Y11
	VMULPD  Y12, Y0, Y6
	VMULPD  Y6, Y6, Y6
	VSUBPD  Y6, Y14, Y6
	VMAXPD  Y6, Y13, Y6
	VMULPD  Y6, Y6, Y7
	VMULPD  Y6, Y7, Y7
	VSUBPD  Y7, Y14, Y7
	VADDPD  Y7, Y9, Y9
	ADDQ    $4, AX
	CMPQ    AX, DX
	JL      sloop

stail:
	// Reduce the lanes: (l0 + l1) + (l2 + l3).
	VEXTRACTF128 $1, Y10, X4
	VHADDPD      X10, X10, X10
	VHADDPD      X4, X4, X4
	VADDSD       X4, X10, X10
	VEXTRACTF128 $1, Y11, X5
	VHADDPD      X11, X11, X11
	VHADDPD      X5, X5, X5
	VADDSD       X5, X11, X11
	VEXTRACTF128 $1, Y9, X6
	VHADDPD      X9, X9, X9
	VHADDPD      X6, X6, X6
	VADDSD       X6, X9, X9
	CMPQ         AX, CX
	JGE          sdone

stailloop:
	VMOVSD (SI)(AX*8), X0
	LEAQ   (BX)(AX*8), R9
	MOVQ   R12, R10
	MOVQ   R13, R11

stkloop:
	VMOVSD (R10), X1
	VMULSD (R9), X1, X1
	VSUBSD X1, X0, X0
	ADDQ   $8, R10
	ADDQ   R14, R9
	DECQ   R11
	JNZ    stkloop

	VMOVSD X0, (DI)(AX*8)
	VMULSD X15, X0, X1
	VMULSD X1, X1, X1
	VSUBSD X1, X14, X2
	VMAXSD X2, X13, X2
	VMULSD X2, X2, X3
	VMULSD X2, X3, X4
	VSUBSD X4, X14, X4
	VADDSD X4, X10, X10
	VMULSD X3, X1, X5
	VADDSD X5, X11, X11
	VMULSD X12, X0, X6
	VMULSD X6, X6, X6
	VSUBSD X6, X14, X6
	VMAXSD X6, X13, X6
	VMULSD X6, X6, X7
	VMULSD X6, X7, X7
	VSUBSD X7, X14, X7
	VADDSD X7, X9, X9
	INCQ   AX
	CMPQ   AX, CX
	JL     stailloop

sdone:
	MOVQ   sums+64(FP), R8
	VMOVSD X10, 0(R8)
	VMOVSD X11, 8(R8)
	VMOVSD X9, 16(R8)
	VZEROUPPER
	RET

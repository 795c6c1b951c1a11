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

// func countBelowAVX(a *float64, n int, x float64) int
//
// The number of a_i < x (false for NaN).
TEXT ·countBelowAVX(SB), NOSPLIT, $0-32
	MOVQ         a+0(FP), SI
	MOVQ         n+8(FP), CX
	VBROADCASTSD x+16(FP), Y15
	XORQ         R8, R8
	XORQ         AX, AX
	MOVQ         CX, DX
	ANDQ         $-8, DX
	JZ           ctail4

cloop:
	VCMPPD    $0x1e, (SI)(AX*8), Y15, Y0
	VCMPPD    $0x1e, 32(SI)(AX*8), Y15, Y1
	VMOVMSKPD Y0, BX
	VMOVMSKPD Y1, R9
	POPCNTQ   BX, BX
	POPCNTQ   R9, R9
	ADDQ      BX, R8
	ADDQ      R9, R8
	ADDQ      $8, AX
	CMPQ      AX, DX
	JL        cloop

ctail4:
	MOVQ CX, DX
	SUBQ AX, DX
	CMPQ DX, $4
	JL   ctail
	VCMPPD    $0x1e, (SI)(AX*8), Y15, Y0
	VMOVMSKPD Y0, BX
	POPCNTQ   BX, BX
	ADDQ      BX, R8
	ADDQ      $4, AX

ctail:
	CMPQ AX, CX
	JGE  cdone

ctailloop:
	VMOVSD  (SI)(AX*8), X0
	XORQ    BX, BX
	VUCOMISD X0, X15
	SETHI   BX
	ADDQ    BX, R8
	INCQ    AX
	CMPQ    AX, CX
	JL      ctailloop

cdone:
	MOVQ R8, ret+24(FP)
	VZEROUPPER
	RET

DATA absMask<>+0(SB)/8, $0x7fffffffffffffff
GLOBL absMask<>(SB), RODATA|NOPTR, $8

// func absMaxSumAVX(r, a *float64, n int) (top, sum float64)
//
// a_i = |r_i|; top is the largest a_i (NaN is lost by the maximum, so the
// caller checks sum, in which NaN and Inf survive), sum their sum in
// lanes.
TEXT ·absMaxSumAVX(SB), NOSPLIT, $0-40
	MOVQ         r+0(FP), SI
	MOVQ         a+8(FP), DI
	MOVQ         n+16(FP), CX
	VBROADCASTSD absMask<>(SB), Y15
	VXORPD       Y0, Y0, Y0 // max
	VXORPD       Y1, Y1, Y1 // sum
	XORQ         AX, AX
	MOVQ         CX, DX
	ANDQ         $-4, DX
	JZ           atail

aloop:
	VANDPD  (SI)(AX*8), Y15, Y2
	VMOVUPD Y2, (DI)(AX*8)
	VMAXPD  Y2, Y0, Y0
	VADDPD  Y2, Y1, Y1
	ADDQ    $4, AX
	CMPQ    AX, DX
	JL      aloop

atail:
	VEXTRACTF128 $1, Y0, X3
	VMAXPD       X3, X0, X0
	VPERMILPD    $1, X0, X3
	VMAXSD       X3, X0, X0
	VEXTRACTF128 $1, Y1, X4
	VADDPD       X4, X1, X1
	VHADDPD      X1, X1, X1
	CMPQ         AX, CX
	JGE          adone

atailloop:
	VMOVSD (SI)(AX*8), X2
	VANDPD X15, X2, X2
	VMOVSD X2, (DI)(AX*8)
	VMAXSD X2, X0, X0
	VADDSD X2, X1, X1
	INCQ   AX
	CMPQ   AX, CX
	JL     atailloop

adone:
	VMOVSD X0, top+24(FP)
	VMOVSD X1, sum+32(FP)
	VZEROUPPER
	RET

// func splitAtAVX(a *float64, n int, x float64) (below, above float64)
//
// The largest a_i < x (0 if none) and the smallest a_i ≥ x (+Inf if
// none), for a_i ≥ 0 and not NaN.
TEXT ·splitAtAVX(SB), NOSPLIT, $0-40
	MOVQ         a+0(FP), SI
	MOVQ         n+8(FP), CX
	VBROADCASTSD x+16(FP), Y15
	VBROADCASTSD posInf<>(SB), Y14
	VXORPD       Y0, Y0, Y0 // below
	VMOVAPD      Y14, Y1    // above
	XORQ         AX, AX
	MOVQ         CX, DX
	ANDQ         $-4, DX
	JZ           ptail

ploop:
	VMOVUPD   (SI)(AX*8), Y2
	VCMPPD    $0x1e, Y2, Y15, Y3 // x > a: below
	VANDPD    Y2, Y3, Y4         // a where below, else 0
	VMAXPD    Y4, Y0, Y0
	VBLENDVPD Y3, Y14, Y2, Y5    // +Inf where below, else a
	VMINPD    Y5, Y1, Y1
	ADDQ      $4, AX
	CMPQ      AX, DX
	JL        ploop

ptail:
	VEXTRACTF128 $1, Y0, X3
	VMAXPD       X3, X0, X0
	VPERMILPD    $1, X0, X3
	VMAXSD       X3, X0, X0
	VEXTRACTF128 $1, Y1, X4
	VMINPD       X4, X1, X1
	VPERMILPD    $1, X1, X4
	VMINSD       X4, X1, X1
	CMPQ         AX, CX
	JGE          pdone

ptailloop:
	VMOVSD    (SI)(AX*8), X2
	VCMPSD    $0x1e, X2, X15, X3
	VANDPD    X2, X3, X4
	VMAXSD    X4, X0, X0
	VBLENDVPD X3, X14, X2, X5
	VMINSD    X5, X1, X1
	INCQ      AX
	CMPQ      AX, CX
	JL        ptailloop

pdone:
	VMOVSD X0, below+24(FP)
	VMOVSD X1, above+32(FP)
	VZEROUPPER
	RET

DATA posInf<>+0(SB)/8, $0x7ff0000000000000
GLOBL posInf<>(SB), RODATA|NOPTR, $8

// func residualsAbsAVX(y, xt, beta *float64, p, n int, r, a *float64, square int) (top, sum float64)
//
// r_i = y_i − Σ_k beta_k·xt[k·n + i], subtracting in order of k, as
// bisqResidualSumsAVX does; a_i = |r_i|, or r_i² when square is not 0 (a
// may then be r); top is the largest a_i and sum their sum in lanes (see
// absMaxSumAVX).
TEXT ·residualsAbsAVX(SB), NOSPLIT, $0-80
	MOVQ         y+0(FP), SI
	MOVQ         xt+8(FP), BX
	MOVQ         beta+16(FP), R12
	MOVQ         p+24(FP), R13
	MOVQ         n+32(FP), CX
	MOVQ         r+40(FP), DI
	MOVQ         a+48(FP), R15
	MOVQ         square+56(FP), R8
	VBROADCASTSD absMask<>(SB), Y15
	VXORPD       Y10, Y10, Y10 // max
	VXORPD       Y11, Y11, Y11 // sum
	MOVQ         CX, R14
	SHLQ         $3, R14
	XORQ         AX, AX
	MOVQ         CX, DX
	ANDQ         $-4, DX
	JZ           rtail

rloop:
	VMOVUPD (SI)(AX*8), Y0
	LEAQ    (BX)(AX*8), R9
	MOVQ    R12, R10
	MOVQ    R13, R11

rkloop:
	VBROADCASTSD (R10), Y1
	VMULPD       (R9), Y1, Y1
	VSUBPD       Y1, Y0, Y0
	ADDQ         $8, R10
	ADDQ         R14, R9
	DECQ         R11
	JNZ          rkloop

	VMOVUPD Y0, (DI)(AX*8)
	VANDPD  Y0, Y15, Y2
	CMPQ    R8, $0
	JEQ     rabs
	VMULPD  Y0, Y0, Y2

rabs:
	VMOVUPD Y2, (R15)(AX*8)
	VMAXPD  Y2, Y10, Y10
	VADDPD  Y2, Y11, Y11
	ADDQ    $4, AX
	CMPQ    AX, DX
	JL      rloop

rtail:
	VEXTRACTF128 $1, Y10, X3
	VMAXPD       X3, X10, X10
	VPERMILPD    $1, X10, X3
	VMAXSD       X3, X10, X10
	VEXTRACTF128 $1, Y11, X4
	VADDPD       X4, X11, X11
	VHADDPD      X11, X11, X11
	CMPQ         AX, CX
	JGE          rdone

rtailloop:
	VMOVSD (SI)(AX*8), X0
	LEAQ   (BX)(AX*8), R9
	MOVQ   R12, R10
	MOVQ   R13, R11

rtkloop:
	VMOVSD (R10), X1
	VMULSD (R9), X1, X1
	VSUBSD X1, X0, X0
	ADDQ   $8, R10
	ADDQ   R14, R9
	DECQ   R11
	JNZ    rtkloop

	VMOVSD X0, (DI)(AX*8)
	VANDPD X15, X0, X2
	CMPQ   R8, $0
	JEQ    rtabs
	VMULSD X0, X0, X2

rtabs:
	VMOVSD X2, (R15)(AX*8)
	VMAXSD X2, X10, X10
	VADDSD X2, X11, X11
	INCQ   AX
	CMPQ   AX, CX
	JL     rtailloop

rdone:
	VMOVSD X10, top+64(FP)
	VMOVSD X11, sum+72(FP)
	VZEROUPPER
	RET

//go:build !purego

#include "textflag.h"

// ACC4 adds, for the column t in AX, the squared differences of x[t] (at SI) and the four groups
// from DI (R10 bytes apart; R12 is three groups) to Y0..Y3: subtract, multiply, add.
#define ACC4 \
	VBROADCASTSD (SI)(AX*8), Y4; \
	VSUBPD (DI), Y4, Y5; \
	VSUBPD (DI)(R10*1), Y4, Y6; \
	VSUBPD (DI)(R10*2), Y4, Y7; \
	VSUBPD (DI)(R12*1), Y4, Y13; \
	VMULPD Y5, Y5, Y5; \
	VMULPD Y6, Y6, Y6; \
	VMULPD Y7, Y7, Y7; \
	VMULPD Y13, Y13, Y13; \
	VADDPD Y5, Y0, Y0; \
	VADDPD Y6, Y1, Y1; \
	VADDPD Y7, Y2, Y2; \
	VADDPD Y13, Y3, Y3

// ACC1 is ACC4 for the one group at DI, into Y0.
#define ACC1 \
	VBROADCASTSD (SI)(AX*8), Y4; \
	VSUBPD (DI), Y4, Y5; \
	VMULPD Y5, Y5, Y5; \
	VADDPD Y5, Y0, Y0

// FOLD folds one group's sums V into each lane's smallest (Y8), second smallest (Y9) and group
// of the smallest (Y10), the group's number in Y11 (then advanced by Y12, all ones). Y13: the sum
// is below the smallest; Y14: the lesser of the sum and the second.
#define FOLD(V) \
	VCMPPD $1, Y8, V, Y13; \
	VMINPD Y9, V, Y14; \
	VBLENDVPD Y13, Y8, Y14, Y9; \
	VBLENDVPD Y13, V, Y8, Y8; \
	VBLENDVPD Y13, Y11, Y10, Y10; \
	VADDPD Y12, Y11, Y11

// func dist2Asm(a, b []float64) float64
//
// Dist2 (lanes.go): the four partial sums are the lanes of Y0, one block of four values a step;
// the values past the last block are added to lane 0 alone; then (s0 + s1) + (s2 + s3). The
// caller checks AVX2 and that b is as long as a.
TEXT ·dist2Asm(SB), NOSPLIT, $0-56
	MOVQ a_base+0(FP), SI
	MOVQ a_len+8(FP), CX
	MOVQ b_base+24(FP), DI
	MOVQ CX, DX
	ANDQ $-4, DX // the values in whole blocks
	VXORPD Y0, Y0, Y0
	XORQ AX, AX

dblock:
	CMPQ AX, DX
	JGE  dtail
	VMOVUPD (SI)(AX*8), Y1
	VSUBPD (DI)(AX*8), Y1, Y1
	VMULPD Y1, Y1, Y1
	VADDPD Y1, Y0, Y0
	ADDQ $4, AX
	JMP  dblock

dtail:
	// Lanes 2 and 3 to X2 first: the scalar operations on X0 clear the upper half of Y0.
	VEXTRACTF128 $1, Y0, X2

dtailloop:
	CMPQ AX, CX
	JGE  dsum
	VMOVSD (SI)(AX*8), X1
	VSUBSD (DI)(AX*8), X1, X1
	VMULSD X1, X1, X1
	VADDSD X1, X0, X0
	INCQ AX
	JMP  dtailloop

dsum:
	VUNPCKHPD X0, X0, X3
	VADDSD X3, X0, X0 // s0 + s1
	VUNPCKHPD X2, X2, X4
	VADDSD X4, X2, X2 // s2 + s3
	VADDSD X2, X0, X0
	VMOVSD X0, ret+48(FP)
	VZEROUPPER
	RET

// D2ROW(ROW, ACC) adds the squared differences of the block of a in Y4 and the block at ROW to
// the four partial sums ACC.
#define D2ROW(ROW, ACC) \
	VSUBPD ROW, Y4, Y5; \
	VMULPD Y5, Y5, Y5; \
	VADDPD Y5, ACC, ACC

// D2TAIL(ROW, ACC) adds the squared difference of the value of a in X8 and the value at ROW to
// lane 0 of ACC.
#define D2TAIL(ROW, ACC) \
	VSUBSD ROW, X8, X9; \
	VMULSD X9, X9, X9; \
	VADDSD X9, ACC, ACC

// D2SUM(ACC, HI, OFF) stores (s0 + s1) + (s2 + s3) of the sums in ACC (lanes 0, 1) and HI
// (lanes 2, 3) at OFF(R9).
#define D2SUM(ACC, HI, OFF) \
	VUNPCKHPD ACC, ACC, X9; \
	VADDSD X9, ACC, ACC; \
	VUNPCKHPD HI, HI, X9; \
	VADDSD X9, HI, HI; \
	VADDSD HI, ACC, ACC; \
	VMOVSD ACC, OFF(R9)

// func dist2x4Asm(a, c []float64, out *[4]float64)
//
// Dist2x4 (lanes.go): dist2Asm for the four rows of c at once (sums Y0 to Y3), a's block loaded
// once. The caller checks AVX2, that a is not empty and that c holds four rows of len(a).
TEXT ·dist2x4Asm(SB), NOSPLIT, $0-56
	MOVQ a_base+0(FP), SI
	MOVQ a_len+8(FP), CX
	MOVQ c_base+24(FP), DI
	MOVQ out+48(FP), R9
	LEAQ (DI)(CX*8), R10 // row 1
	LEAQ (R10)(CX*8), R11 // row 2
	LEAQ (R11)(CX*8), R12 // row 3
	MOVQ CX, DX
	ANDQ $-4, DX // the values in whole blocks
	VXORPD Y0, Y0, Y0
	VXORPD Y1, Y1, Y1
	VXORPD Y2, Y2, Y2
	VXORPD Y3, Y3, Y3
	XORQ AX, AX

qblock:
	CMPQ AX, DX
	JGE  qtail
	VMOVUPD (SI)(AX*8), Y4
	D2ROW((DI)(AX*8), Y0)
	D2ROW((R10)(AX*8), Y1)
	D2ROW((R11)(AX*8), Y2)
	D2ROW((R12)(AX*8), Y3)
	ADDQ $4, AX
	JMP  qblock

qtail:
	// Lanes 2 and 3 of each sum first: the scalar operations clear the upper halves.
	VEXTRACTF128 $1, Y0, X4
	VEXTRACTF128 $1, Y1, X5
	VEXTRACTF128 $1, Y2, X6
	VEXTRACTF128 $1, Y3, X7

qtailloop:
	CMPQ AX, CX
	JGE  qsum
	VMOVSD (SI)(AX*8), X8
	D2TAIL((DI)(AX*8), X0)
	D2TAIL((R10)(AX*8), X1)
	D2TAIL((R11)(AX*8), X2)
	D2TAIL((R12)(AX*8), X3)
	INCQ AX
	JMP  qtailloop

qsum:
	D2SUM(X0, X4, 0)
	D2SUM(X1, X5, 8)
	D2SUM(X2, X6, 16)
	D2SUM(X3, X7, 24)
	VZEROUPPER
	RET

// DOT2(LOAD, A, B) adds, for the column t in AX, x0[t] (Y8) and x1[t] (Y9) times the four
// values at LOAD (one group's column t) to the sums A and B.
#define DOT2(LOAD, A, B) \
	VMOVUPD LOAD, Y10; \
	VMULPD Y10, Y8, Y14; \
	VMULPD Y10, Y9, Y15; \
	VADDPD Y14, A, A; \
	VADDPD Y15, B, B

// XPAIR broadcasts x0[t] to Y8 and x1[t] to Y9, t in AX.
#define XPAIR \
	VBROADCASTSD (SI)(AX*8), Y8; \
	VBROADCASTSD (R8)(AX*8), Y9

// func dots2Asm(x0, x1, ct []float64, groups int, out []float64)
//
// Dots2 (lanes.go), one lane per vector: for each group the sums of x0 (Y0, Y2, …) and x1
// (Y1, Y3, …) over t in order. Four groups go together (eight independent sums), then the rest
// one at a time. The caller checks AVX2 and the lengths.
TEXT ·dots2Asm(SB), NOSPLIT, $0-104
	MOVQ x0_base+0(FP), SI
	MOVQ x0_len+8(FP), CX
	MOVQ x1_base+24(FP), R8
	MOVQ ct_base+48(FP), DI
	MOVQ groups+72(FP), BX
	MOVQ out_base+80(FP), DX
	MOVQ CX, R10
	SHLQ $5, R10           // one group: 32·d bytes
	LEAQ (R10)(R10*2), R12 // three groups

dfour:
	CMPQ BX, $4
	JLT  done
	VXORPD Y0, Y0, Y0
	VXORPD Y1, Y1, Y1
	VXORPD Y2, Y2, Y2
	VXORPD Y3, Y3, Y3
	VXORPD Y4, Y4, Y4
	VXORPD Y5, Y5, Y5
	VXORPD Y6, Y6, Y6
	VXORPD Y7, Y7, Y7
	MOVQ DI, R9
	XORQ AX, AX

dfourloop:
	CMPQ AX, CX
	JGE  dfourdone
	XPAIR
	DOT2((R9), Y0, Y1)
	DOT2((R9)(R10*1), Y2, Y3)
	DOT2((R9)(R10*2), Y4, Y5)
	DOT2((R9)(R12*1), Y6, Y7)
	ADDQ $32, R9
	INCQ AX
	JMP  dfourloop

dfourdone:
	VMOVUPD Y0, (DX)
	VMOVUPD Y1, 32(DX)
	VMOVUPD Y2, 64(DX)
	VMOVUPD Y3, 96(DX)
	VMOVUPD Y4, 128(DX)
	VMOVUPD Y5, 160(DX)
	VMOVUPD Y6, 192(DX)
	VMOVUPD Y7, 224(DX)
	ADDQ $256, DX
	LEAQ (DI)(R10*4), DI
	SUBQ $4, BX
	JMP  dfour

done:
	CMPQ BX, $0
	JLE  dend
	VXORPD Y0, Y0, Y0
	VXORPD Y1, Y1, Y1
	XORQ AX, AX

doneloop:
	CMPQ AX, CX
	JGE  donedone
	XPAIR
	DOT2((DI), Y0, Y1)
	ADDQ $32, DI
	INCQ AX
	JMP  doneloop

donedone:
	VMOVUPD Y0, (DX)
	VMOVUPD Y1, 32(DX)
	ADDQ $64, DX
	DECQ BX
	JMP  done

dend:
	VZEROUPPER
	RET

// func weightedRootSumsAsm(a, x, w []float64, out *[4]float64)
//
// WeightedRootSums (lanes.go), one lane per vector: two rows go together (two independent inner
// sums), their terms added to the total in row order. The caller checks AVX2 and the lengths.
TEXT ·weightedRootSumsAsm(SB), NOSPLIT, $0-80
	MOVQ a_base+0(FP), DI
	MOVQ a_len+8(FP), CX
	SHRQ $2, CX           // d
	MOVQ x_base+24(FP), SI
	MOVQ w_base+48(FP), R8
	MOVQ w_len+56(FP), BX
	MOVQ out+72(FP), DX
	VXORPD Y7, Y7, Y7

rows2:
	CMPQ BX, $2
	JLT  rows1
	LEAQ (SI)(CX*8), R11  // the second row
	MOVQ DI, R9
	VXORPD Y0, Y0, Y0
	VXORPD Y1, Y1, Y1
	XORQ AX, AX

inner2:
	CMPQ AX, CX
	JGE  done2
	VMOVUPD (R9), Y6
	VBROADCASTSD (SI)(AX*8), Y4
	VBROADCASTSD (R11)(AX*8), Y5
	VSUBPD Y6, Y4, Y4
	VSUBPD Y6, Y5, Y5
	VMULPD Y4, Y4, Y4
	VMULPD Y5, Y5, Y5
	VADDPD Y4, Y0, Y0
	VADDPD Y5, Y1, Y1
	ADDQ $32, R9
	INCQ AX
	JMP  inner2

done2:
	VSQRTPD Y0, Y0
	VSQRTPD Y1, Y1
	VBROADCASTSD (R8), Y2
	VBROADCASTSD 8(R8), Y3
	VMULPD Y2, Y0, Y0
	VMULPD Y3, Y1, Y1
	VADDPD Y0, Y7, Y7
	VADDPD Y1, Y7, Y7
	LEAQ (R11)(CX*8), SI
	ADDQ $16, R8
	SUBQ $2, BX
	JMP  rows2

rows1:
	CMPQ BX, $0
	JLE  end
	MOVQ DI, R9
	VXORPD Y0, Y0, Y0
	XORQ AX, AX

inner1:
	CMPQ AX, CX
	JGE  done1
	VMOVUPD (R9), Y6
	VBROADCASTSD (SI)(AX*8), Y4
	VSUBPD Y6, Y4, Y4
	VMULPD Y4, Y4, Y4
	VADDPD Y4, Y0, Y0
	ADDQ $32, R9
	INCQ AX
	JMP  inner1

done1:
	VSQRTPD Y0, Y0
	VBROADCASTSD (R8), Y2
	VMULPD Y2, Y0, Y0
	VADDPD Y0, Y7, Y7

end:
	VMOVUPD Y7, (DX)
	VZEROUPPER
	RET

// The lane numbers 0, 1, 2, 3 as float64.
DATA laneNumbers<>+0(SB)/8, $0x0000000000000000
DATA laneNumbers<>+8(SB)/8, $0x3ff0000000000000
DATA laneNumbers<>+16(SB)/8, $0x4000000000000000
DATA laneNumbers<>+24(SB)/8, $0x4008000000000000
GLOBL laneNumbers<>(SB), RODATA|NOPTR, $32

// MERGE merges each lane's (smallest Y8, second smallest Y9, index of the smallest Y10) with
// another's (Y0, Y1, Y2): the winner is the lesser smallest, the lesser index where they are
// equal; the second smallest of the two sets is the lesser of the winner's second and the
// loser's smallest. Y3: the other lane wins.
#define MERGE \
	VCMPPD $1, Y8, Y0, Y3; \
	VCMPPD $0, Y8, Y0, Y4; \
	VCMPPD $1, Y10, Y2, Y5; \
	VANDPD Y5, Y4, Y4; \
	VORPD Y4, Y3, Y3; \
	VBLENDVPD Y3, Y1, Y9, Y6; \
	VBLENDVPD Y3, Y8, Y0, Y7; \
	VMINPD Y7, Y6, Y9; \
	VBLENDVPD Y3, Y0, Y8, Y8; \
	VBLENDVPD Y3, Y2, Y10, Y10

// func nearest2Asm(x, ct []float64, groups int) (best int, d1, d2 float64)
//
// Nearest2 (lanes.go): each group's four sums (ACC4, ACC1), then folded into each lane's
// smallest (Y8), second smallest (Y9) and group of the smallest (Y10) in group order: where a sum
// is below the smallest, the smallest becomes the second and the sum the smallest; otherwise the
// second becomes the lesser of itself and the sum. Four groups go together, then the rest one at
// a time. The four lanes are then merged pairwise (MERGE): lanes 0–1 with 2–3, then 0 with 1.
// The caller checks AVX2 and the lengths.
TEXT ·nearest2Asm(SB), NOSPLIT, $0-80
	MOVQ x_base+0(FP), SI
	MOVQ x_len+8(FP), CX
	MOVQ ct_base+24(FP), DI
	MOVQ groups+48(FP), BX
	MOVQ CX, R10
	SHLQ $5, R10
	LEAQ (R10)(R10*2), R12
	MOVQ $0x7ff0000000000000, R13 // +Inf
	MOVQ R13, X8
	VBROADCASTSD X8, Y8
	VMOVAPD Y8, Y9
	VXORPD Y10, Y10, Y10          // the group of the smallest
	VXORPD Y11, Y11, Y11          // this group's number
	MOVQ $0x3ff0000000000000, R13 // 1.0
	MOVQ R13, X12
	VBROADCASTSD X12, Y12

nfour:
	CMPQ BX, $4
	JLT  none
	VXORPD Y0, Y0, Y0
	VXORPD Y1, Y1, Y1
	VXORPD Y2, Y2, Y2
	VXORPD Y3, Y3, Y3
	XORQ AX, AX

nfourloop:
	CMPQ AX, CX
	JGE  nfourdone
	ACC4
	ADDQ $32, DI
	INCQ AX
	JMP  nfourloop

nfourdone:
	// Fold Y0..Y3 in group order.
	FOLD(Y0)
	FOLD(Y1)
	FOLD(Y2)
	FOLD(Y3)
	ADDQ R12, DI
	SUBQ $4, BX
	JMP  nfour

none:
	CMPQ BX, $0
	JLE  ndone
	VXORPD Y0, Y0, Y0
	XORQ AX, AX

noneloop:
	CMPQ AX, CX
	JGE  nonedone
	ACC1
	ADDQ $32, DI
	INCQ AX
	JMP  noneloop

nonedone:
	FOLD(Y0)
	DECQ BX
	JMP  none

ndone:
	// Each lane's index of its smallest, 4·group + lane (exact).
	VADDPD Y10, Y10, Y10
	VADDPD Y10, Y10, Y10
	VADDPD laneNumbers<>(SB), Y10, Y10
	VPERM2F128 $1, Y8, Y8, Y0
	VPERM2F128 $1, Y9, Y9, Y1
	VPERM2F128 $1, Y10, Y10, Y2
	MERGE
	VPERMILPD $5, Y8, Y0
	VPERMILPD $5, Y9, Y1
	VPERMILPD $5, Y10, Y2
	MERGE
	CVTTSD2SQ X10, AX
	MOVQ AX, best+56(FP)
	VMOVSD X8, d1+64(FP)
	VMOVSD X9, d2+72(FP)
	VZEROUPPER
	RET

// SROW8(OFF, ACC) adds the four products of aj (Y15) and a's values at byte offset OFF of the
// chunk (R10 is the row, AX the chunk's first value) to ACC: multiply, then add.
#define SROW8(OFF, ACC) \
	VMULPD OFF(R10)(AX*8), Y15, Y14; \
	VADDPD Y14, ACC, ACC

// func syrkRowAsm(c, a []float64, lda, rows int)
//
// syrkRow (lanes.go): c[m] += a[l·lda]·a[l·lda + m] for every m < len(c) and the rows l < rows
// in order, a row whose a[l·lda] is zero skipped, each product rounded before its sum: 32 values
// of c in Y0..Y7 while the rows go by, then 4 in Y0, then one at a time. The caller checks AVX2
// and the lengths.
TEXT ·syrkRowAsm(SB), NOSPLIT, $0-64
	MOVQ c_base+0(FP), DI
	MOVQ c_len+8(FP), CX
	MOVQ a_base+24(FP), SI
	MOVQ lda+48(FP), R8
	SHLQ $3, R8 // bytes between rows
	MOVQ rows+56(FP), R9
	VXORPD X13, X13, X13 // zero, for the skip test
	XORQ AX, AX

s32:
	LEAQ 32(AX), DX
	CMPQ DX, CX
	JGT  s4
	VMOVUPD (DI)(AX*8), Y0
	VMOVUPD 32(DI)(AX*8), Y1
	VMOVUPD 64(DI)(AX*8), Y2
	VMOVUPD 96(DI)(AX*8), Y3
	VMOVUPD 128(DI)(AX*8), Y4
	VMOVUPD 160(DI)(AX*8), Y5
	VMOVUPD 192(DI)(AX*8), Y6
	VMOVUPD 224(DI)(AX*8), Y7
	MOVQ SI, R10
	MOVQ R9, R11

s32row:
	TESTQ R11, R11
	JE    s32store
	VMOVSD (R10), X15
	VUCOMISD X13, X15
	JP    s32mul // NaN: not skipped
	JE    s32next
s32mul:
	VBROADCASTSD X15, Y15
	SROW8(0, Y0)
	SROW8(32, Y1)
	SROW8(64, Y2)
	SROW8(96, Y3)
	SROW8(128, Y4)
	SROW8(160, Y5)
	SROW8(192, Y6)
	SROW8(224, Y7)
s32next:
	ADDQ R8, R10
	DECQ R11
	JMP  s32row

s32store:
	VMOVUPD Y0, (DI)(AX*8)
	VMOVUPD Y1, 32(DI)(AX*8)
	VMOVUPD Y2, 64(DI)(AX*8)
	VMOVUPD Y3, 96(DI)(AX*8)
	VMOVUPD Y4, 128(DI)(AX*8)
	VMOVUPD Y5, 160(DI)(AX*8)
	VMOVUPD Y6, 192(DI)(AX*8)
	VMOVUPD Y7, 224(DI)(AX*8)
	ADDQ $32, AX
	JMP  s32

s4:
	LEAQ 4(AX), DX
	CMPQ DX, CX
	JGT  s1
	VMOVUPD (DI)(AX*8), Y0
	MOVQ SI, R10
	MOVQ R9, R11

s4row:
	TESTQ R11, R11
	JE    s4store
	VMOVSD (R10), X15
	VUCOMISD X13, X15
	JP    s4mul
	JE    s4next
s4mul:
	VBROADCASTSD X15, Y15
	SROW8(0, Y0)
s4next:
	ADDQ R8, R10
	DECQ R11
	JMP  s4row

s4store:
	VMOVUPD Y0, (DI)(AX*8)
	ADDQ $4, AX
	JMP  s4

s1:
	CMPQ AX, CX
	JGE  sdone
	VMOVSD (DI)(AX*8), X0
	MOVQ SI, R10
	MOVQ R9, R11

s1row:
	TESTQ R11, R11
	JE    s1store
	VMOVSD (R10), X15
	VUCOMISD X13, X15
	JP    s1mul
	JE    s1next
s1mul:
	VMULSD (R10)(AX*8), X15, X14
	VADDSD X14, X0, X0
s1next:
	ADDQ R8, R10
	DECQ R11
	JMP  s1row

s1store:
	VMOVSD X0, (DI)(AX*8)
	INCQ AX
	JMP  s1

sdone:
	VZEROUPPER
	RET

// func addMomentsAsm(x, m, s, q []float64, w float64)
//
// AddMoments (lanes.go): e = x − m, u = w·e, s += u, q += u·e, four values a step in Y0..Y3, then
// one at a time; s and q are the first operands of their sums, as in the scalar loop. The caller
// checks AVX2, that x is not empty and that m, s and q are as long as x.
TEXT ·addMomentsAsm(SB), NOSPLIT, $0-104
	MOVQ x_base+0(FP), SI
	MOVQ x_len+8(FP), CX
	MOVQ m_base+24(FP), DI
	MOVQ s_base+48(FP), R8
	MOVQ q_base+72(FP), R9
	VBROADCASTSD w+96(FP), Y15
	MOVQ CX, DX
	ANDQ $-4, DX // the values in whole blocks
	XORQ AX, AX

mblock:
	CMPQ AX, DX
	JGE  mtail
	VMOVUPD (SI)(AX*8), Y0
	VSUBPD  (DI)(AX*8), Y0, Y0 // e
	VMULPD  Y0, Y15, Y1        // u = w·e
	VMOVUPD (R8)(AX*8), Y2
	VADDPD  Y1, Y2, Y2         // s + u
	VMOVUPD Y2, (R8)(AX*8)
	VMULPD  Y0, Y1, Y3         // u·e
	VMOVUPD (R9)(AX*8), Y2
	VADDPD  Y3, Y2, Y2         // q + u·e
	VMOVUPD Y2, (R9)(AX*8)
	ADDQ    $4, AX
	JMP     mblock

mtail:
	CMPQ   AX, CX
	JGE    mdone
	VMOVSD (SI)(AX*8), X0
	VSUBSD (DI)(AX*8), X0, X0
	VMULSD X0, X15, X1
	VMOVSD (R8)(AX*8), X2
	VADDSD X1, X2, X2
	VMOVSD X2, (R8)(AX*8)
	VMULSD X0, X1, X3
	VMOVSD (R9)(AX*8), X2
	VADDSD X3, X2, X2
	VMOVSD X2, (R9)(AX*8)
	INCQ   AX
	JMP    mtail

mdone:
	VZEROUPPER
	RET

// func scaledDistsAsm(x, ct, st []float64, groups int, out []float64)
//
// ScaledDists (lanes.go): the four sums of a group are the lanes of one register, x[t]
// broadcast to all four; two groups at a time (Y0 and Y2) while two are left, so that two chains
// of additions run side by side, then one. Each lane: e = x[t] − c, e·e, times s, added to its
// sum. The caller checks AVX2, that x is not empty, groups ≥ 1 and the lengths.
TEXT ·scaledDistsAsm(SB), NOSPLIT, $0-104
	MOVQ x_base+0(FP), SI
	MOVQ x_len+8(FP), CX
	MOVQ ct_base+24(FP), DI
	MOVQ st_base+48(FP), R8
	MOVQ groups+72(FP), R9
	MOVQ out_base+80(FP), R10
	MOVQ CX, R11
	SHLQ $5, R11 // bytes of one group: 4·d values

pair:
	CMPQ   R9, $2
	JLT    single
	VXORPD Y0, Y0, Y0
	VXORPD Y2, Y2, Y2
	XORQ   AX, AX
	MOVQ   DI, R12
	MOVQ   R8, R13

pairval:
	CMPQ         AX, CX
	JGE          pairstore
	VBROADCASTSD (SI)(AX*8), Y4
	VSUBPD       (R12), Y4, Y1
	VSUBPD       (R12)(R11*1), Y4, Y3
	VMULPD       Y1, Y1, Y1
	VMULPD       Y3, Y3, Y3
	VMULPD       (R13), Y1, Y1
	VMULPD       (R13)(R11*1), Y3, Y3
	VADDPD       Y1, Y0, Y0
	VADDPD       Y3, Y2, Y2
	ADDQ         $32, R12
	ADDQ         $32, R13
	INCQ         AX
	JMP          pairval

pairstore:
	VMOVUPD Y0, (R10)
	VMOVUPD Y2, 32(R10)
	LEAQ    (DI)(R11*2), DI
	LEAQ    (R8)(R11*2), R8
	ADDQ    $64, R10
	SUBQ    $2, R9
	JMP     pair

single:
	TESTQ  R9, R9
	JE     done
	VXORPD Y0, Y0, Y0
	XORQ   AX, AX

singleval:
	CMPQ         AX, CX
	JGE          singlestore
	VBROADCASTSD (SI)(AX*8), Y4
	VSUBPD       (DI), Y4, Y1
	VMULPD       Y1, Y1, Y1
	VMULPD       (R8), Y1, Y1
	VADDPD       Y1, Y0, Y0
	ADDQ         $32, DI
	ADDQ         $32, R8
	INCQ         AX
	JMP          singleval

singlestore:
	VMOVUPD Y0, (R10)

done:
	VZEROUPPER
	RET

// func addOuter4Asm(q []float64, d int, e []float64, w *[4]float64)
//
// AddOuter4 (lanes.go): for each row a, the four a_c = w[c]·e_c[a] broadcast to Y4..Y7, then the
// row's values from the diagonal on, four at a time and then one at a time: the products
// a_c·e_c[b] added left to right (Y0), the sum added to q. R12 walks e_0 from a, e_1 and e_2 at
// BX and 2·BX past it (BX the bytes of a point), R13 = R12 + BX reaches e_3 at 2·BX; R11 walks q's
// row. The caller checks AVX2, d ≥ 1 and the lengths.
TEXT ·addOuter4Asm(SB), NOSPLIT, $0-64
	MOVQ q_base+0(FP), DI
	MOVQ d+24(FP), CX
	MOVQ e_base+32(FP), R9
	MOVQ w+56(FP), R8
	MOVQ CX, BX
	SHLQ $3, BX
	XORQ AX, AX

orow:
	CMPQ         AX, CX
	JGE          odone
	LEAQ         (R9)(AX*8), R12
	LEAQ         (R12)(BX*1), R13
	VMOVSD       0(R8), X4
	VMULSD       (R12), X4, X4
	VBROADCASTSD X4, Y4
	VMOVSD       8(R8), X5
	VMULSD       (R12)(BX*1), X5, X5
	VBROADCASTSD X5, Y5
	VMOVSD       16(R8), X6
	VMULSD       (R12)(BX*2), X6, X6
	VBROADCASTSD X6, Y6
	VMOVSD       24(R8), X7
	VMULSD       (R13)(BX*2), X7, X7
	VBROADCASTSD X7, Y7
	MOVQ         AX, R11
	IMULQ        CX, R11
	ADDQ         AX, R11
	LEAQ         (DI)(R11*8), R11 // &q[a·d + a]
	MOVQ         CX, DX
	SUBQ         AX, DX           // values in the row
	MOVQ         DX, SI
	ANDQ         $-4, SI          // of them in whole blocks

oblock:
	TESTQ   SI, SI
	JE      otail
	VMULPD  (R12), Y4, Y0
	VMULPD  (R12)(BX*1), Y5, Y1
	VADDPD  Y1, Y0, Y0
	VMULPD  (R12)(BX*2), Y6, Y1
	VADDPD  Y1, Y0, Y0
	VMULPD  (R13)(BX*2), Y7, Y1
	VADDPD  Y1, Y0, Y0
	VMOVUPD (R11), Y2
	VADDPD  Y0, Y2, Y2
	VMOVUPD Y2, (R11)
	ADDQ    $32, R12
	ADDQ    $32, R13
	ADDQ    $32, R11
	SUBQ    $4, SI
	SUBQ    $4, DX
	JMP     oblock

otail:
	TESTQ  DX, DX
	JE     onext
	VMULSD (R12), X4, X0
	VMULSD (R12)(BX*1), X5, X1
	VADDSD X1, X0, X0
	VMULSD (R12)(BX*2), X6, X1
	VADDSD X1, X0, X0
	VMULSD (R13)(BX*2), X7, X1
	VADDSD X1, X0, X0
	VMOVSD (R11), X2
	VADDSD X0, X2, X2
	VMOVSD X2, (R11)
	ADDQ   $8, R12
	ADDQ   $8, R13
	ADDQ   $8, R11
	DECQ   DX
	JMP    otail

onext:
	INCQ AX
	JMP  orow

odone:
	VZEROUPPER
	RET

// func solve4Asm(x, ct, lt, it []float64, groups int, z, out []float64)
//
// Solve4 (lanes.go): two groups at a time while two are left, so that two chains of subtractions
// run side by side, then one. A group's four components are in the lanes of one register: s in
// Y1 (Y4 for the second group), q in Y0 (Y3). DI, R9 and R8 walk the first group's means, the
// reciprocals of its diagonals and the rows of its factors (R13 = 32·d bytes: a row of a group's
// factors, and the distance from one group's means or reciprocals to the next's); CX walks the
// second group's factor rows. z[a] of a pair is stored at 64·a bytes into z (first group) and 32
// past it (second); of a single group at 32·a. The caller checks AVX2, d ≥ 1, groups ≥ 1 and the
// lengths.
TEXT ·solve4Asm(SB), NOSPLIT, $0-152
	MOVQ x_len+8(FP), R13
	SHLQ $5, R13
	MOVQ ct_base+24(FP), DI
	MOVQ lt_base+48(FP), R8
	MOVQ it_base+72(FP), R9
	MOVQ groups+96(FP), R10
	MOVQ z_base+104(FP), R11
	MOVQ out_base+128(FP), R12

fpair:
	CMPQ   R10, $2
	JLT    fgroup
	MOVQ   x_base+0(FP), SI
	MOVQ   x_len+8(FP), AX
	MOVQ   AX, CX
	IMULQ  R13, CX
	ADDQ   R8, CX // the second group's factors: 32·d·d bytes on
	XORQ   DX, DX // 32·a
	VXORPD Y0, Y0, Y0
	VXORPD Y3, Y3, Y3

prow:
	TESTQ        AX, AX
	JE           pstore
	VBROADCASTSD (SI), Y5
	VSUBPD       (DI), Y5, Y1
	VSUBPD       (DI)(R13*1), Y5, Y4
	XORQ         BX, BX

psub:
	CMPQ    BX, DX
	JGE     pscale
	VMOVUPD (R8)(BX*1), Y2
	VMULPD  (R11)(BX*2), Y2, Y2
	VSUBPD  Y2, Y1, Y1
	VMOVUPD (CX)(BX*1), Y6
	VMULPD  32(R11)(BX*2), Y6, Y6
	VSUBPD  Y6, Y4, Y4
	ADDQ    $32, BX
	JMP     psub

pscale:
	VMULPD  (R9), Y1, Y1
	VMULPD  (R9)(R13*1), Y4, Y4
	VMOVUPD Y1, (R11)(DX*2)
	VMOVUPD Y4, 32(R11)(DX*2)
	VMULPD  Y1, Y1, Y2
	VADDPD  Y2, Y0, Y0
	VMULPD  Y4, Y4, Y6
	VADDPD  Y6, Y3, Y3
	ADDQ    $8, SI
	ADDQ    $32, DI
	ADDQ    $32, R9
	ADDQ    R13, R8
	ADDQ    R13, CX
	ADDQ    $32, DX
	DECQ    AX
	JMP     prow

pstore:
	VMOVUPD Y0, (R12)
	VMOVUPD Y3, 32(R12)
	ADDQ    $64, R12
	ADDQ    R13, DI
	ADDQ    R13, R9
	MOVQ    CX, R8
	SUBQ    $2, R10
	JMP     fpair

fgroup:
	TESTQ  R10, R10
	JE     fdone
	MOVQ   x_base+0(FP), SI
	MOVQ   x_len+8(FP), AX
	XORQ   DX, DX // 32·a
	VXORPD Y0, Y0, Y0

frow:
	TESTQ        AX, AX
	JE           fstore
	VBROADCASTSD (SI), Y1
	VSUBPD       (DI), Y1, Y1 // s = x[a] − μ[a]
	XORQ         BX, BX

fsub:
	CMPQ    BX, DX
	JGE     fscale
	VMOVUPD (R8)(BX*1), Y2
	VMULPD  (R11)(BX*1), Y2, Y2 // L[a,b]·z[b]
	VSUBPD  Y2, Y1, Y1
	ADDQ    $32, BX
	JMP     fsub

fscale:
	VMULPD  (R9), Y1, Y1 // z[a] = s·(1/L[a,a])
	VMOVUPD Y1, (R11)(DX*1)
	VMULPD  Y1, Y1, Y2
	VADDPD  Y2, Y0, Y0
	ADDQ    $8, SI
	ADDQ    $32, DI
	ADDQ    $32, R9
	ADDQ    R13, R8
	ADDQ    $32, DX
	DECQ    AX
	JMP     frow

fstore:
	VMOVUPD Y0, (R12)
	ADDQ    $32, R12
	DECQ    R10
	JMP     fgroup

fdone:
	VZEROUPPER
	RET

//go:build amd64 && !purego

#include "textflag.h"

// func dot2AVX(x, y, z []float64) (sy, sz float64)
// Requires AVX2 and FMA; y and z at least as long as x. Eight elements an
// iteration in two partial sums per result, then four, then one at a time.
TEXT ·dot2AVX(SB), NOSPLIT, $0-88
	MOVQ x_base+0(FP), SI
	MOVQ x_len+8(FP), CX
	MOVQ y_base+24(FP), DX
	MOVQ z_base+48(FP), DI
	VXORPD Y0, Y0, Y0
	VXORPD Y1, Y1, Y1
	VXORPD Y2, Y2, Y2
	VXORPD Y3, Y3, Y3
	XORQ AX, AX

loop8:
	LEAQ 8(AX), BX
	CMPQ BX, CX
	JGT  tail4
	VMOVUPD (SI)(AX*8), Y4
	VMOVUPD 32(SI)(AX*8), Y5
	VFMADD231PD (DX)(AX*8), Y4, Y0
	VFMADD231PD 32(DX)(AX*8), Y5, Y1
	VFMADD231PD (DI)(AX*8), Y4, Y2
	VFMADD231PD 32(DI)(AX*8), Y5, Y3
	MOVQ BX, AX
	JMP  loop8

tail4:
	LEAQ 4(AX), BX
	CMPQ BX, CX
	JGT  reduce
	VMOVUPD (SI)(AX*8), Y4
	VFMADD231PD (DX)(AX*8), Y4, Y0
	VFMADD231PD (DI)(AX*8), Y4, Y2
	MOVQ BX, AX

reduce:
	VADDPD Y1, Y0, Y0
	VADDPD Y3, Y2, Y2
	VEXTRACTF128 $1, Y0, X4
	VADDPD X4, X0, X0
	VHADDPD X0, X0, X0
	VEXTRACTF128 $1, Y2, X5
	VADDPD X5, X2, X2
	VHADDPD X2, X2, X2

tail1:
	CMPQ AX, CX
	JGE  done
	VMOVSD (SI)(AX*8), X6
	VFMADD231SD (DX)(AX*8), X6, X0
	VFMADD231SD (DI)(AX*8), X6, X2
	INCQ AX
	JMP  tail1

done:
	VZEROUPPER
	MOVSD X0, sy+72(FP)
	MOVSD X2, sz+80(FP)
	RET

//go:build goexperiment.simd && amd64

#include "textflag.h"

// func transpose8x8asm(dst unsafe.Pointer, ds uintptr, src unsafe.Pointer, ss uintptr)
//
// Row k of the 8×8 block at dst (rows ds bytes apart) is column k of the
// 8×8 block at src (rows ss bytes apart): unpack, shuffle and permute in
// registers, a copy without arithmetic. AVX.
TEXT ·transpose8x8asm(SB), NOSPLIT, $0-32
	MOVQ dst+0(FP), DI
	MOVQ ds+8(FP), R10
	MOVQ src+16(FP), SI
	MOVQ ss+24(FP), R8
	LEAQ (R8)(R8*2), R11
	LEAQ (SI)(R8*4), R9
	VMOVUPS (SI), Y0
	VMOVUPS (SI)(R8*1), Y1
	VMOVUPS (SI)(R8*2), Y2
	VMOVUPS (SI)(R11*1), Y3
	VMOVUPS (R9), Y4
	VMOVUPS (R9)(R8*1), Y5
	VMOVUPS (R9)(R8*2), Y6
	VMOVUPS (R9)(R11*1), Y7
	VUNPCKLPS Y1, Y0, Y8
	VUNPCKHPS Y1, Y0, Y9
	VUNPCKLPS Y3, Y2, Y10
	VUNPCKHPS Y3, Y2, Y11
	VUNPCKLPS Y5, Y4, Y12
	VUNPCKHPS Y5, Y4, Y13
	VUNPCKLPS Y7, Y6, Y14
	VUNPCKHPS Y7, Y6, Y15
	VSHUFPS $0x44, Y10, Y8, Y0
	VSHUFPS $0xEE, Y10, Y8, Y1
	VSHUFPS $0x44, Y11, Y9, Y2
	VSHUFPS $0xEE, Y11, Y9, Y3
	VSHUFPS $0x44, Y14, Y12, Y4
	VSHUFPS $0xEE, Y14, Y12, Y5
	VSHUFPS $0x44, Y15, Y13, Y6
	VSHUFPS $0xEE, Y15, Y13, Y7
	VPERM2F128 $0x20, Y4, Y0, Y8
	VPERM2F128 $0x20, Y5, Y1, Y9
	VPERM2F128 $0x20, Y6, Y2, Y10
	VPERM2F128 $0x20, Y7, Y3, Y11
	VPERM2F128 $0x31, Y4, Y0, Y12
	VPERM2F128 $0x31, Y5, Y1, Y13
	VPERM2F128 $0x31, Y6, Y2, Y14
	VPERM2F128 $0x31, Y7, Y3, Y15
	LEAQ (R10)(R10*2), R11
	LEAQ (DI)(R10*4), R9
	VMOVUPS Y8, (DI)
	VMOVUPS Y9, (DI)(R10*1)
	VMOVUPS Y10, (DI)(R10*2)
	VMOVUPS Y11, (DI)(R11*1)
	VMOVUPS Y12, (R9)
	VMOVUPS Y13, (R9)(R10*1)
	VMOVUPS Y14, (R9)(R10*2)
	VMOVUPS Y15, (R9)(R11*1)
	VZEROUPPER
	RET

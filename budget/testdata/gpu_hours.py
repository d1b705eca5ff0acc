#!/usr/bin/env python3
"""Reference value for TestFromGPUHours, in exact rational arithmetic.

1000 H100-hours at 989e12 FLOP/s dense BF16 peak (vendor datasheet figure,
recalled from memory) at MFU 0.4. Also prints the 6ND worked example used by
TestTrainFLOPs and TestLedger (6ND, common practice).
"""
from fractions import Fraction as F

flops = F(1000) * 3600 * F(989) * 10**12 * F(4, 10)
print("gpu hours:", flops, float(flops))          # 1424160000000000000000 1.42416e+21
print("6ND:", 6 * F(7 * 10**9) * F(10**9) * 1)    # 42000000000000000000

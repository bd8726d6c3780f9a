# ruff: noqa: E501 (the docstring holds the output tables verbatim)
"""A cross-validated kernel/linear weight near N/T = 1, paired against LedoitWolf.

Candidate remedy for the AR(1) rho = 0.5 deficit of ``near_singular_ratio.md``:
the eigenvalues ``d = d_K + tau(c) w (d_L - d_K)`` with ``d_K`` the default
(stabilized) KernelShrink values, ``d_L`` the Ledoit-Wolf (2004) linear
shrinkage of the same sample eigenvalues, ``tau`` the plateau phase-in (1 on
``|c - 1| <= 0.1``, linear to 0 at ``|c - 1| = 0.2``, ``c = N/n``) and ``w`` in
[0, 1] chosen by K-fold cross-validation of the oracle quantities: on each fold
the training rows give the eigenvectors ``u_i`` and both shrunk vectors, the
held-out rows the unbiased estimates ``u_i' S_test u_i`` of ``u_i' Sigma u_i``
(the split idea of Abadir, Distaso & Zikes 2014 and Lam 2016, Ann. Statist.
44(3)); ``w`` minimises the held-out Frobenius criterion
``sum_i (d_K,i + w (d_L,i - d_K,i) - u_i' S_test u_i)^2`` summed over the
folds (null directions included through the trace of ``S_test``), a closed
form clipped to [0, 1].

The draws are those of ``benchmarks/near_singular_ratio.py`` (same designs,
samplers, seeds and loss helpers), so the LW and stabilized columns repeat
its tables. Paired differences draw by draw, mean (SE = sd / sqrt(reps)) t.

Command (one core of the shared 2-core machine, under load)::

    OMP_NUM_THREADS=1 python benchmarks/near_singular_crossvalidated.py --reps 40

Result (40 draws, N = 150, the draws of near_singular_ratio.md; "cv10" is
K = 10, "cv5" K = 5):

- Frobenius loss: cv5 and cv10 are never significantly worse than
  LedoitWolf (0 of 30 cells with t > 2, also with ``--seed 107``); on AR(1)
  rho = 0.5 they turn the default's deficit (+0.0023 to +0.0103, t = 2 to
  11) into -0.0011 to -0.0001 (cv10). But against the default they cost the
  mixture: cv10 +0.0067 (SE 0.0038) at N/n = 0.90, +0.0064 (0.0058) at 0.95
  (Gaussian, seed 7) and +0.0153 (0.0059, t = 2.6) at 0.95 with seed 107;
  cv5 +0.021 to +0.026 (t = 2.8 to 3.8) at 0.90 and 0.95 with both seeds.
  On AR(1) rho = 0.9 cv10 is significantly worse than the default in 5
  (seed 7) and 9 (seed 107) of the 10 cells (+0.002 to +0.013), while
  staying below LedoitWolf.
- Minimum-variance loss: cv10 shrinks the AR(1) gaps to LedoitWolf (rho =
  0.5: +0.013..+0.022 -> -0.0000..+0.0012; rho = 0.9: +0.0021..+0.0042 ->
  +0.0010..+0.0025) but they stay significant in 17 (seed 7) and 19 (seed
  107) of the 30 cells, all on the AR(1) designs; the infeasible
  Frobenius-optimal weight (``comb*plat``) leaves them too. On the mixture
  cv improves on the default and on LedoitWolf in every cell (seed 7; no
  cell worse than the default with seed 107).
- The weight: the held-out weight of linear shrinkage is higher on average
  than the infeasible per-draw optimum ``w*`` in 26 of 30 cells (mixture
  0.28 vs 0.19, AR(1) 0.5 0.83 vs 0.75, AR(1) 0.9 0.23 vs 0.20, cv10, seed
  7) and uncorrelated or negatively correlated with it draw by draw on the
  mixture (Gaussian) and AR(1) rho = 0.9. A plausible cause (not tested
  here): each training part has the larger ratio N / (n (K - 1) / K), where
  the kernel estimate is relatively weaker.
- Cost: K extra eigendecompositions and kernel/linear rules per fit inside
  the zone, measured 3.8 (K = 5) and 8.6 (K = 10) times the full-sample
  kernel + linear cleaning (2 shared cores under load; ratios from one run).

Decision: not adopted as the default; available as the opt-in
``KernelShrink(near_singular="cross-validated", n_folds=10)``, whose weight is
the ``cv_weight`` below (the library function). The criterion for the option (no
cell in [0.9, 1.1] significantly worse than LedoitWolf, in both losses,
and no significant harm to the mixture against the default) fails on the
minimum-variance loss of both AR(1) designs and on the mixture's Frobenius
loss (cv10 at N/n = 0.95 with seed 107; cv5 at 0.90 and 0.95 with both).

Output of the command above (seed 7)::

    # openblas 0.3.30: 1
    # openmp None: 2
    # openblas 0.3.31.188.0: 1
    # openmp None: 1

    # cost over all draws: full-sample kernel + linear 5.1 s; the weight with K = 5: 19.1 s (x 3.8), K = 10: 43.7 s (x 8.6)

    Mean weight of linear shrinkage (before tau): cv5, cv10, infeasible w*

    | design | data | N/n | tau | cv5 | cv10 | w* | corr(cv10, w*) |
    |---|---|---|---|---|---|---|---|
    | mixture 1/3/10 | Gaussian | 0.898 | 0.98 | 0.222 | 0.136 | 0.077 | -0.45 |
    | mixture 1/3/10 | Gaussian | 0.949 | 1.00 | 0.246 | 0.191 | 0.095 | -0.38 |
    | mixture 1/3/10 | Gaussian | 1.000 | 1.00 | 0.232 | 0.247 | 0.128 | -0.31 |
    | mixture 1/3/10 | Gaussian | 1.049 | 1.00 | 0.309 | 0.273 | 0.170 | +0.09 |
    | mixture 1/3/10 | Gaussian | 1.103 | 0.97 | 0.247 | 0.221 | 0.243 | -0.17 |
    | mixture 1/3/10 | t5 | 0.898 | 0.98 | 0.364 | 0.258 | 0.158 | +0.65 |
    | mixture 1/3/10 | t5 | 0.949 | 1.00 | 0.414 | 0.340 | 0.193 | +0.74 |
    | mixture 1/3/10 | t5 | 1.000 | 1.00 | 0.419 | 0.349 | 0.226 | +0.71 |
    | mixture 1/3/10 | t5 | 1.049 | 1.00 | 0.471 | 0.395 | 0.254 | -0.08 |
    | mixture 1/3/10 | t5 | 1.103 | 0.97 | 0.504 | 0.422 | 0.346 | +0.73 |
    | AR(1) rho=0.5 | Gaussian | 0.898 | 0.98 | 0.810 | 0.751 | 0.625 | +0.46 |
    | AR(1) rho=0.5 | Gaussian | 0.949 | 1.00 | 0.812 | 0.784 | 0.682 | +0.51 |
    | AR(1) rho=0.5 | Gaussian | 1.000 | 1.00 | 0.848 | 0.852 | 0.743 | +0.39 |
    | AR(1) rho=0.5 | Gaussian | 1.049 | 1.00 | 0.865 | 0.838 | 0.819 | +0.51 |
    | AR(1) rho=0.5 | Gaussian | 1.103 | 0.97 | 0.830 | 0.802 | 0.789 | +0.33 |
    | AR(1) rho=0.5 | t5 | 0.898 | 0.98 | 0.826 | 0.771 | 0.641 | +0.29 |
    | AR(1) rho=0.5 | t5 | 0.949 | 1.00 | 0.916 | 0.881 | 0.805 | +0.51 |
    | AR(1) rho=0.5 | t5 | 1.000 | 1.00 | 0.914 | 0.887 | 0.762 | +0.65 |
    | AR(1) rho=0.5 | t5 | 1.049 | 1.00 | 0.897 | 0.842 | 0.803 | +0.37 |
    | AR(1) rho=0.5 | t5 | 1.103 | 0.97 | 0.915 | 0.883 | 0.835 | +0.51 |
    | AR(1) rho=0.9 | Gaussian | 0.898 | 0.98 | 0.179 | 0.142 | 0.249 | -0.02 |
    | AR(1) rho=0.9 | Gaussian | 0.949 | 1.00 | 0.208 | 0.206 | 0.197 | -0.30 |
    | AR(1) rho=0.9 | Gaussian | 1.000 | 1.00 | 0.185 | 0.232 | 0.188 | -0.25 |
    | AR(1) rho=0.9 | Gaussian | 1.049 | 1.00 | 0.248 | 0.237 | 0.220 | -0.05 |
    | AR(1) rho=0.9 | Gaussian | 1.103 | 0.97 | 0.266 | 0.251 | 0.192 | -0.43 |
    | AR(1) rho=0.9 | t5 | 0.898 | 0.98 | 0.287 | 0.325 | 0.133 | -0.34 |
    | AR(1) rho=0.9 | t5 | 0.949 | 1.00 | 0.251 | 0.293 | 0.170 | -0.44 |
    | AR(1) rho=0.9 | t5 | 1.000 | 1.00 | 0.284 | 0.265 | 0.239 | -0.15 |
    | AR(1) rho=0.9 | t5 | 1.049 | 1.00 | 0.245 | 0.201 | 0.256 | -0.15 |
    | AR(1) rho=0.9 | t5 | 1.103 | 0.97 | 0.260 | 0.178 | 0.198 | -0.15 |

    Frobenius loss, N = 150, 40 draws per row; paired differences: mean (SE) t

    | design | data | N/n | LW | stabilized | cv5 | cv10 | comb*plat | stab - LW | cv5 - LW | cv10 - LW | cv5 - stab | cv10 - stab |
    |---|---|---|---|---|---|---|---|---|---|---|---|---|
    | mixture 1/3/10 | Gaussian | 0.898 | 9.4370 | 8.7304 | 8.7511 | 8.7371 | 8.7179 | -0.7067 (0.0111) -63.4 | -0.6860 (0.0118) -58.0 | -0.7000 (0.0107) -65.6 | +0.0207 (0.0068) +3.0 | +0.0067 (0.0038) +1.8 |
    | mixture 1/3/10 | Gaussian | 0.949 | 9.6210 | 8.9748 | 8.9990 | 8.9811 | 8.9603 | -0.6462 (0.0138) -46.7 | -0.6220 (0.0114) -54.6 | -0.6399 (0.0116) -55.1 | +0.0242 (0.0087) +2.8 | +0.0064 (0.0058) +1.1 |
    | mixture 1/3/10 | Gaussian | 1.000 | 9.7819 | 9.2068 | 9.2075 | 9.2117 | 9.1857 | -0.5751 (0.0151) -38.2 | -0.5744 (0.0127) -45.1 | -0.5702 (0.0127) -44.8 | +0.0007 (0.0068) +0.1 | +0.0048 (0.0067) +0.7 |
    | mixture 1/3/10 | Gaussian | 1.049 | 9.9413 | 9.4605 | 9.4496 | 9.4434 | 9.4199 | -0.4807 (0.0255) -18.9 | -0.4917 (0.0175) -28.1 | -0.4979 (0.0185) -26.9 | -0.0110 (0.0132) -0.8 | -0.0171 (0.0109) -1.6 |
    | mixture 1/3/10 | Gaussian | 1.103 | 10.1057 | 9.6910 | 9.6426 | 9.6455 | 9.6291 | -0.4147 (0.0191) -21.8 | -0.4631 (0.0125) -37.1 | -0.4602 (0.0132) -34.9 | -0.0484 (0.0084) -5.8 | -0.0455 (0.0075) -6.1 |
    | mixture 1/3/10 | t5 | 0.898 | 9.5974 | 9.0712 | 9.0557 | 9.0331 | 9.0139 | -0.5262 (0.0499) -10.5 | -0.5417 (0.0246) -22.1 | -0.5643 (0.0243) -23.2 | -0.0155 (0.0312) -0.5 | -0.0381 (0.0302) -1.3 |
    | mixture 1/3/10 | t5 | 0.949 | 9.8051 | 9.4391 | 9.3358 | 9.3141 | 9.2877 | -0.3660 (0.1237) -3.0 | -0.4693 (0.0274) -17.1 | -0.4909 (0.0259) -18.9 | -0.1033 (0.1082) -1.0 | -0.1249 (0.1075) -1.2 |
    | mixture 1/3/10 | t5 | 1.000 | 9.9283 | 9.5333 | 9.4962 | 9.4772 | 9.4576 | -0.3949 (0.0450) -8.8 | -0.4320 (0.0245) -17.6 | -0.4511 (0.0242) -18.7 | -0.0371 (0.0263) -1.4 | -0.0562 (0.0260) -2.2 |
    | mixture 1/3/10 | t5 | 1.049 | 10.1348 | 9.7913 | 9.7717 | 9.7541 | 9.7198 | -0.3435 (0.0276) -12.4 | -0.3631 (0.0180) -20.2 | -0.3807 (0.0180) -21.1 | -0.0196 (0.0159) -1.2 | -0.0371 (0.0140) -2.7 |
    | mixture 1/3/10 | t5 | 1.103 | 10.2346 | 10.1416 | 9.8858 | 9.8736 | 9.8558 | -0.0930 (0.1600) -0.6 | -0.3488 (0.0257) -13.6 | -0.3610 (0.0256) -14.1 | -0.2559 (0.1434) -1.8 | -0.2680 (0.1427) -1.9 |
    | AR(1) rho=0.5 | Gaussian | 0.898 | 0.3811 | 0.3834 | 0.3801 | 0.3799 | 0.3797 | +0.0023 (0.0004) +5.4 | -0.0010 (0.0002) -6.3 | -0.0011 (0.0002) -7.5 | -0.0033 (0.0004) -9.2 | -0.0034 (0.0003) -10.1 |
    | AR(1) rho=0.5 | Gaussian | 0.949 | 0.3924 | 0.3968 | 0.3916 | 0.3915 | 0.3912 | +0.0044 (0.0007) +6.2 | -0.0008 (0.0001) -5.7 | -0.0010 (0.0002) -6.2 | -0.0052 (0.0006) -8.3 | -0.0053 (0.0006) -8.7 |
    | AR(1) rho=0.5 | Gaussian | 1.000 | 0.4001 | 0.4052 | 0.3997 | 0.3996 | 0.3994 | +0.0051 (0.0006) +8.1 | -0.0005 (0.0001) -3.7 | -0.0005 (0.0001) -4.0 | -0.0056 (0.0006) -9.7 | -0.0056 (0.0006) -9.7 |
    | AR(1) rho=0.5 | Gaussian | 1.049 | 0.4083 | 0.4161 | 0.4082 | 0.4082 | 0.4077 | +0.0078 (0.0009) +8.3 | -0.0001 (0.0002) -0.5 | -0.0001 (0.0002) -0.5 | -0.0079 (0.0008) -9.7 | -0.0079 (0.0008) -10.0 |
    | AR(1) rho=0.5 | Gaussian | 1.103 | 0.4138 | 0.4205 | 0.4136 | 0.4136 | 0.4132 | +0.0068 (0.0006) +11.2 | -0.0002 (0.0001) -1.1 | -0.0002 (0.0001) -1.4 | -0.0069 (0.0005) -13.2 | -0.0069 (0.0005) -13.2 |
    | AR(1) rho=0.5 | t5 | 0.898 | 0.3881 | 0.3914 | 0.3870 | 0.3870 | 0.3866 | +0.0033 (0.0006) +5.3 | -0.0010 (0.0002) -5.4 | -0.0011 (0.0002) -5.5 | -0.0043 (0.0005) -8.4 | -0.0044 (0.0005) -8.8 |
    | AR(1) rho=0.5 | t5 | 0.949 | 0.3988 | 0.4066 | 0.3984 | 0.3985 | 0.3981 | +0.0078 (0.0010) +8.1 | -0.0004 (0.0002) -2.4 | -0.0004 (0.0002) -2.1 | -0.0082 (0.0009) -9.5 | -0.0081 (0.0009) -9.4 |
    | AR(1) rho=0.5 | t5 | 1.000 | 0.4055 | 0.4157 | 0.4050 | 0.4049 | 0.4046 | +0.0102 (0.0047) +2.2 | -0.0005 (0.0002) -3.1 | -0.0006 (0.0002) -3.4 | -0.0107 (0.0046) -2.3 | -0.0108 (0.0046) -2.3 |
    | AR(1) rho=0.5 | t5 | 1.049 | 0.4133 | 0.4223 | 0.4129 | 0.4130 | 0.4126 | +0.0090 (0.0010) +8.6 | -0.0004 (0.0002) -2.7 | -0.0003 (0.0002) -1.8 | -0.0094 (0.0009) -9.9 | -0.0093 (0.0009) -10.1 |
    | AR(1) rho=0.5 | t5 | 1.103 | 0.4199 | 0.4303 | 0.4198 | 0.4198 | 0.4195 | +0.0103 (0.0013) +8.2 | -0.0001 (0.0002) -0.6 | -0.0001 (0.0002) -0.8 | -0.0104 (0.0012) -9.0 | -0.0105 (0.0011) -9.2 |
    | AR(1) rho=0.9 | Gaussian | 0.898 | 0.8426 | 0.8190 | 0.8206 | 0.8206 | 0.8125 | -0.0236 (0.0051) -4.6 | -0.0220 (0.0045) -4.9 | -0.0220 (0.0045) -4.9 | +0.0016 (0.0017) +0.9 | +0.0016 (0.0019) +0.9 |
    | AR(1) rho=0.9 | Gaussian | 0.949 | 0.9186 | 0.8856 | 0.8899 | 0.8898 | 0.8806 | -0.0330 (0.0048) -6.8 | -0.0286 (0.0040) -7.2 | -0.0288 (0.0043) -6.7 | +0.0043 (0.0019) +2.2 | +0.0042 (0.0015) +2.8 |
    | AR(1) rho=0.9 | Gaussian | 1.000 | 0.9517 | 0.9229 | 0.9264 | 0.9274 | 0.9174 | -0.0288 (0.0044) -6.5 | -0.0252 (0.0041) -6.2 | -0.0242 (0.0040) -6.0 | +0.0036 (0.0012) +2.9 | +0.0046 (0.0014) +3.3 |
    | AR(1) rho=0.9 | Gaussian | 1.049 | 1.0010 | 0.9710 | 0.9769 | 0.9759 | 0.9653 | -0.0300 (0.0047) -6.4 | -0.0240 (0.0035) -6.8 | -0.0250 (0.0037) -6.7 | +0.0060 (0.0029) +2.1 | +0.0050 (0.0028) +1.8 |
    | AR(1) rho=0.9 | Gaussian | 1.103 | 0.9976 | 0.9645 | 0.9718 | 0.9722 | 0.9591 | -0.0331 (0.0050) -6.6 | -0.0258 (0.0041) -6.2 | -0.0254 (0.0041) -6.2 | +0.0074 (0.0029) +2.5 | +0.0077 (0.0031) +2.4 |
    | AR(1) rho=0.9 | t5 | 0.898 | 0.8876 | 0.8526 | 0.8634 | 0.8651 | 0.8488 | -0.0350 (0.0048) -7.3 | -0.0242 (0.0040) -6.0 | -0.0225 (0.0040) -5.7 | +0.0108 (0.0030) +3.6 | +0.0126 (0.0033) +3.8 |
    | AR(1) rho=0.9 | t5 | 0.949 | 0.9224 | 0.8929 | 0.9002 | 0.9018 | 0.8888 | -0.0295 (0.0044) -6.7 | -0.0222 (0.0037) -5.9 | -0.0206 (0.0037) -5.6 | +0.0073 (0.0024) +3.0 | +0.0089 (0.0025) +3.5 |
    | AR(1) rho=0.9 | t5 | 1.000 | 1.0095 | 0.9814 | 0.9851 | 0.9874 | 0.9737 | -0.0281 (0.0054) -5.2 | -0.0244 (0.0040) -6.1 | -0.0221 (0.0042) -5.3 | +0.0037 (0.0022) +1.7 | +0.0060 (0.0031) +2.0 |
    | AR(1) rho=0.9 | t5 | 1.049 | 0.9970 | 0.9754 | 0.9794 | 0.9781 | 0.9653 | -0.0217 (0.0066) -3.3 | -0.0177 (0.0062) -2.8 | -0.0190 (0.0063) -3.0 | +0.0040 (0.0017) +2.3 | +0.0027 (0.0019) +1.4 |
    | AR(1) rho=0.9 | t5 | 1.103 | 1.0504 | 1.0182 | 1.0208 | 1.0215 | 1.0126 | -0.0322 (0.0052) -6.2 | -0.0296 (0.0039) -7.6 | -0.0289 (0.0044) -6.6 | +0.0026 (0.0027) +1.0 | +0.0033 (0.0023) +1.4 |

    minimum-variance loss, N = 150, 40 draws per row; paired differences: mean (SE) t

    | design | data | N/n | LW | stabilized | cv5 | cv10 | comb*plat | stab - LW | cv5 - LW | cv10 - LW | cv5 - stab | cv10 - stab |
    |---|---|---|---|---|---|---|---|---|---|---|---|---|
    | mixture 1/3/10 | Gaussian | 0.898 | 1.8123 | 1.7941 | 1.7298 | 1.7476 | 1.7600 | -0.0182 (0.0073) -2.5 | -0.0825 (0.0044) -18.9 | -0.0647 (0.0063) -10.3 | -0.0643 (0.0048) -13.3 | -0.0465 (0.0046) -10.0 |
    | mixture 1/3/10 | Gaussian | 0.949 | 1.8522 | 1.8106 | 1.7712 | 1.7739 | 1.7832 | -0.0417 (0.0068) -6.2 | -0.0810 (0.0039) -20.9 | -0.0784 (0.0040) -19.4 | -0.0394 (0.0043) -9.1 | -0.0367 (0.0037) -10.0 |
    | mixture 1/3/10 | Gaussian | 1.000 | 1.8837 | 1.8642 | 1.8196 | 1.8195 | 1.8268 | -0.0195 (0.0087) -2.3 | -0.0641 (0.0039) -16.3 | -0.0642 (0.0047) -13.8 | -0.0446 (0.0065) -6.9 | -0.0446 (0.0067) -6.6 |
    | mixture 1/3/10 | Gaussian | 1.049 | 1.9138 | 1.8905 | 1.8462 | 1.8468 | 1.8546 | -0.0233 (0.0069) -3.4 | -0.0676 (0.0029) -23.1 | -0.0670 (0.0031) -21.5 | -0.0443 (0.0050) -8.9 | -0.0437 (0.0049) -9.0 |
    | mixture 1/3/10 | Gaussian | 1.103 | 1.9505 | 1.9840 | 1.9079 | 1.9130 | 1.9040 | +0.0334 (0.0091) +3.7 | -0.0426 (0.0051) -8.4 | -0.0375 (0.0056) -6.8 | -0.0760 (0.0066) -11.6 | -0.0710 (0.0058) -12.2 |
    | mixture 1/3/10 | t5 | 0.898 | 1.8343 | 1.8136 | 1.7363 | 1.7431 | 1.7614 | -0.0207 (0.0069) -3.0 | -0.0980 (0.0031) -31.4 | -0.0912 (0.0038) -23.8 | -0.0773 (0.0059) -13.1 | -0.0705 (0.0058) -12.2 |
    | mixture 1/3/10 | t5 | 0.949 | 1.8758 | 1.8222 | 1.7861 | 1.7842 | 1.7909 | -0.0536 (0.0065) -8.3 | -0.0896 (0.0040) -22.5 | -0.0916 (0.0038) -23.9 | -0.0360 (0.0065) -5.5 | -0.0380 (0.0056) -6.8 |
    | mixture 1/3/10 | t5 | 1.000 | 1.9105 | 1.8781 | 1.8336 | 1.8316 | 1.8366 | -0.0324 (0.0070) -4.6 | -0.0769 (0.0035) -22.1 | -0.0789 (0.0034) -22.9 | -0.0445 (0.0065) -6.8 | -0.0465 (0.0065) -7.1 |
    | mixture 1/3/10 | t5 | 1.049 | 1.9415 | 1.9146 | 1.8665 | 1.8651 | 1.8665 | -0.0269 (0.0066) -4.1 | -0.0750 (0.0029) -25.6 | -0.0764 (0.0031) -24.3 | -0.0481 (0.0060) -8.0 | -0.0495 (0.0053) -9.3 |
    | mixture 1/3/10 | t5 | 1.103 | 1.9634 | 1.9830 | 1.8939 | 1.8950 | 1.8933 | +0.0196 (0.0098) +2.0 | -0.0695 (0.0035) -19.8 | -0.0684 (0.0035) -19.4 | -0.0891 (0.0087) -10.3 | -0.0881 (0.0083) -10.7 |
    | AR(1) rho=0.5 | Gaussian | 0.898 | 0.2150 | 0.2338 | 0.2155 | 0.2159 | 0.2167 | +0.0188 (0.0014) +13.6 | +0.0005 (0.0001) +3.7 | +0.0008 (0.0002) +4.1 | -0.0183 (0.0014) -13.2 | -0.0180 (0.0014) -13.1 |
    | AR(1) rho=0.5 | Gaussian | 0.949 | 0.2221 | 0.2382 | 0.2226 | 0.2227 | 0.2232 | +0.0162 (0.0010) +15.6 | +0.0005 (0.0002) +3.3 | +0.0006 (0.0001) +4.5 | -0.0156 (0.0010) -16.1 | -0.0155 (0.0010) -15.9 |
    | AR(1) rho=0.5 | Gaussian | 1.000 | 0.2266 | 0.2409 | 0.2269 | 0.2269 | 0.2271 | +0.0143 (0.0012) +12.2 | +0.0003 (0.0001) +2.3 | +0.0004 (0.0002) +2.0 | -0.0139 (0.0011) -12.5 | -0.0139 (0.0011) -12.5 |
    | AR(1) rho=0.5 | Gaussian | 1.049 | 0.2317 | 0.2478 | 0.2325 | 0.2327 | 0.2321 | +0.0161 (0.0011) +14.8 | +0.0008 (0.0003) +2.8 | +0.0010 (0.0004) +2.7 | -0.0154 (0.0010) -14.9 | -0.0151 (0.0010) -15.6 |
    | AR(1) rho=0.5 | Gaussian | 1.103 | 0.2360 | 0.2580 | 0.2371 | 0.2372 | 0.2367 | +0.0220 (0.0018) +12.1 | +0.0011 (0.0004) +3.1 | +0.0012 (0.0003) +3.8 | -0.0209 (0.0016) -13.0 | -0.0208 (0.0017) -12.2 |
    | AR(1) rho=0.5 | t5 | 0.898 | 0.2174 | 0.2364 | 0.2178 | 0.2181 | 0.2186 | +0.0190 (0.0012) +15.5 | +0.0003 (0.0002) +1.7 | +0.0007 (0.0003) +2.7 | -0.0187 (0.0012) -15.8 | -0.0183 (0.0012) -15.6 |
    | AR(1) rho=0.5 | t5 | 0.949 | 0.2239 | 0.2395 | 0.2239 | 0.2242 | 0.2243 | +0.0156 (0.0009) +17.5 | +0.0001 (0.0001) +1.0 | +0.0003 (0.0002) +1.5 | -0.0155 (0.0009) -17.3 | -0.0153 (0.0009) -16.2 |
    | AR(1) rho=0.5 | t5 | 1.000 | 0.2285 | 0.2415 | 0.2285 | 0.2285 | 0.2289 | +0.0130 (0.0010) +12.7 | -0.0000 (0.0000) -0.3 | -0.0000 (0.0001) -0.2 | -0.0130 (0.0010) -12.8 | -0.0130 (0.0010) -12.8 |
    | AR(1) rho=0.5 | t5 | 1.049 | 0.2334 | 0.2503 | 0.2337 | 0.2340 | 0.2337 | +0.0169 (0.0011) +15.8 | +0.0002 (0.0002) +1.6 | +0.0005 (0.0002) +2.4 | -0.0166 (0.0010) -16.3 | -0.0163 (0.0010) -16.3 |
    | AR(1) rho=0.5 | t5 | 1.103 | 0.2375 | 0.2583 | 0.2378 | 0.2379 | 0.2378 | +0.0208 (0.0014) +15.0 | +0.0003 (0.0003) +1.3 | +0.0004 (0.0003) +1.7 | -0.0205 (0.0013) -15.2 | -0.0204 (0.0014) -15.1 |
    | AR(1) rho=0.9 | Gaussian | 0.898 | 0.0578 | 0.0607 | 0.0596 | 0.0598 | 0.0592 | +0.0029 (0.0003) +9.6 | +0.0018 (0.0003) +5.9 | +0.0020 (0.0003) +7.0 | -0.0011 (0.0002) -4.7 | -0.0009 (0.0002) -3.7 |
    | AR(1) rho=0.9 | Gaussian | 0.949 | 0.0610 | 0.0633 | 0.0626 | 0.0625 | 0.0624 | +0.0023 (0.0002) +11.9 | +0.0016 (0.0002) +6.5 | +0.0015 (0.0002) +6.1 | -0.0007 (0.0001) -5.6 | -0.0008 (0.0001) -6.0 |
    | AR(1) rho=0.9 | Gaussian | 1.000 | 0.0632 | 0.0654 | 0.0646 | 0.0644 | 0.0645 | +0.0022 (0.0003) +8.2 | +0.0014 (0.0003) +5.1 | +0.0011 (0.0003) +4.4 | -0.0008 (0.0002) -5.1 | -0.0010 (0.0002) -4.8 |
    | AR(1) rho=0.9 | Gaussian | 1.049 | 0.0658 | 0.0684 | 0.0674 | 0.0674 | 0.0674 | +0.0026 (0.0002) +11.7 | +0.0016 (0.0002) +6.8 | +0.0016 (0.0002) +6.9 | -0.0011 (0.0002) -4.9 | -0.0010 (0.0002) -4.7 |
    | AR(1) rho=0.9 | Gaussian | 1.103 | 0.0685 | 0.0727 | 0.0708 | 0.0709 | 0.0710 | +0.0042 (0.0004) +11.2 | +0.0023 (0.0003) +6.8 | +0.0023 (0.0003) +7.2 | -0.0019 (0.0003) -5.9 | -0.0018 (0.0004) -4.9 |
    | AR(1) rho=0.9 | t5 | 0.898 | 0.0583 | 0.0615 | 0.0602 | 0.0600 | 0.0606 | +0.0031 (0.0003) +11.8 | +0.0019 (0.0003) +5.9 | +0.0017 (0.0003) +5.4 | -0.0012 (0.0002) -5.4 | -0.0015 (0.0002) -7.0 |
    | AR(1) rho=0.9 | t5 | 0.949 | 0.0615 | 0.0639 | 0.0628 | 0.0626 | 0.0632 | +0.0023 (0.0002) +13.7 | +0.0013 (0.0002) +7.3 | +0.0010 (0.0002) +6.3 | -0.0011 (0.0002) -5.5 | -0.0013 (0.0002) -6.2 |
    | AR(1) rho=0.9 | t5 | 1.000 | 0.0638 | 0.0659 | 0.0647 | 0.0650 | 0.0649 | +0.0021 (0.0002) +9.2 | +0.0009 (0.0002) +4.5 | +0.0011 (0.0003) +4.6 | -0.0011 (0.0002) -7.5 | -0.0009 (0.0002) -6.2 |
    | AR(1) rho=0.9 | t5 | 1.049 | 0.0666 | 0.0695 | 0.0683 | 0.0685 | 0.0683 | +0.0029 (0.0003) +10.3 | +0.0017 (0.0002) +6.9 | +0.0019 (0.0003) +6.7 | -0.0012 (0.0003) -4.8 | -0.0010 (0.0003) -4.0 |
    | AR(1) rho=0.9 | t5 | 1.103 | 0.0689 | 0.0728 | 0.0708 | 0.0714 | 0.0712 | +0.0040 (0.0003) +13.9 | +0.0019 (0.0003) +7.3 | +0.0025 (0.0003) +8.5 | -0.0020 (0.0003) -6.5 | -0.0015 (0.0003) -4.6 |

    Cells (of 30) where the first is significantly worse, t > 2:

    - Frobenius: stab vs LW: 10 (ar.5/Gaussian/0.90, ar.5/Gaussian/0.95, ar.5/Gaussian/1.00, ar.5/Gaussian/1.05, ar.5/Gaussian/1.10, ar.5/t5/0.90, ar.5/t5/0.95, ar.5/t5/1.00, ar.5/t5/1.05, ar.5/t5/1.10); cv5 vs LW: 0; cv10 vs LW: 0; cv5 vs stab: 9 (mix/Gaussian/0.90, mix/Gaussian/0.95, ar.9/Gaussian/0.95, ar.9/Gaussian/1.00, ar.9/Gaussian/1.05, ar.9/Gaussian/1.10, ar.9/t5/0.90, ar.9/t5/0.95, ar.9/t5/1.05); cv10 vs stab: 5 (ar.9/Gaussian/0.95, ar.9/Gaussian/1.00, ar.9/Gaussian/1.10, ar.9/t5/0.90, ar.9/t5/0.95)
    - minimum-variance: stab vs LW: 21 (mix/Gaussian/1.10, ar.5/Gaussian/0.90, ar.5/Gaussian/0.95, ar.5/Gaussian/1.00, ar.5/Gaussian/1.05, ar.5/Gaussian/1.10, ar.5/t5/0.90, ar.5/t5/0.95, ar.5/t5/1.00, ar.5/t5/1.05, ar.5/t5/1.10, ar.9/Gaussian/0.90, ar.9/Gaussian/0.95, ar.9/Gaussian/1.00, ar.9/Gaussian/1.05, ar.9/Gaussian/1.10, ar.9/t5/0.90, ar.9/t5/0.95, ar.9/t5/1.00, ar.9/t5/1.05, ar.9/t5/1.10); cv5 vs LW: 15 (ar.5/Gaussian/0.90, ar.5/Gaussian/0.95, ar.5/Gaussian/1.00, ar.5/Gaussian/1.05, ar.5/Gaussian/1.10, ar.9/Gaussian/0.90, ar.9/Gaussian/0.95, ar.9/Gaussian/1.00, ar.9/Gaussian/1.05, ar.9/Gaussian/1.10, ar.9/t5/0.90, ar.9/t5/0.95, ar.9/t5/1.00, ar.9/t5/1.05, ar.9/t5/1.10); cv10 vs LW: 17 (ar.5/Gaussian/0.90, ar.5/Gaussian/0.95, ar.5/Gaussian/1.00, ar.5/Gaussian/1.05, ar.5/Gaussian/1.10, ar.5/t5/0.90, ar.5/t5/1.05, ar.9/Gaussian/0.90, ar.9/Gaussian/0.95, ar.9/Gaussian/1.00, ar.9/Gaussian/1.05, ar.9/Gaussian/1.10, ar.9/t5/0.90, ar.9/t5/0.95, ar.9/t5/1.00, ar.9/t5/1.05, ar.9/t5/1.10); cv5 vs stab: 0; cv10 vs stab: 0

With ``--seed 107`` (other draws), the significance summary and the mixture
Frobenius rows::

    - Frobenius: stab vs LW: 10 (ar.5/Gaussian/0.90, ar.5/Gaussian/0.95, ar.5/Gaussian/1.00, ar.5/Gaussian/1.05, ar.5/Gaussian/1.10, ar.5/t5/0.90, ar.5/t5/0.95, ar.5/t5/1.00, ar.5/t5/1.05, ar.5/t5/1.10); cv5 vs LW: 0; cv10 vs LW: 0; cv5 vs stab: 10 (mix/Gaussian/0.90, mix/Gaussian/0.95, ar.9/Gaussian/0.90, ar.9/Gaussian/1.00, ar.9/Gaussian/1.05, ar.9/Gaussian/1.10, ar.9/t5/0.95, ar.9/t5/1.00, ar.9/t5/1.05, ar.9/t5/1.10); cv10 vs stab: 10 (mix/Gaussian/0.95, ar.9/Gaussian/0.90, ar.9/Gaussian/1.00, ar.9/Gaussian/1.05, ar.9/Gaussian/1.10, ar.9/t5/0.90, ar.9/t5/0.95, ar.9/t5/1.00, ar.9/t5/1.05, ar.9/t5/1.10)
    - minimum-variance: stab vs LW: 22 (mix/Gaussian/1.10, mix/t5/1.10, ar.5/Gaussian/0.90, ar.5/Gaussian/0.95, ar.5/Gaussian/1.00, ar.5/Gaussian/1.05, ar.5/Gaussian/1.10, ar.5/t5/0.90, ar.5/t5/0.95, ar.5/t5/1.00, ar.5/t5/1.05, ar.5/t5/1.10, ar.9/Gaussian/0.90, ar.9/Gaussian/0.95, ar.9/Gaussian/1.00, ar.9/Gaussian/1.05, ar.9/Gaussian/1.10, ar.9/t5/0.90, ar.9/t5/0.95, ar.9/t5/1.00, ar.9/t5/1.05, ar.9/t5/1.10); cv5 vs LW: 15 (ar.5/Gaussian/0.90, ar.5/Gaussian/1.00, ar.5/Gaussian/1.05, ar.5/Gaussian/1.10, ar.5/t5/1.10, ar.9/Gaussian/0.90, ar.9/Gaussian/0.95, ar.9/Gaussian/1.00, ar.9/Gaussian/1.05, ar.9/Gaussian/1.10, ar.9/t5/0.90, ar.9/t5/0.95, ar.9/t5/1.00, ar.9/t5/1.05, ar.9/t5/1.10); cv10 vs LW: 19 (ar.5/Gaussian/0.90, ar.5/Gaussian/0.95, ar.5/Gaussian/1.00, ar.5/Gaussian/1.05, ar.5/Gaussian/1.10, ar.5/t5/0.90, ar.5/t5/0.95, ar.5/t5/1.00, ar.5/t5/1.10, ar.9/Gaussian/0.90, ar.9/Gaussian/0.95, ar.9/Gaussian/1.00, ar.9/Gaussian/1.05, ar.9/Gaussian/1.10, ar.9/t5/0.90, ar.9/t5/0.95, ar.9/t5/1.00, ar.9/t5/1.05, ar.9/t5/1.10); cv5 vs stab: 0; cv10 vs stab: 0

    | design | data | N/n | LW | stabilized | cv5 | cv10 | comb*plat | stab - LW | cv5 - LW | cv10 - LW | cv5 - stab | cv10 - stab |
    | mixture 1/3/10 | Gaussian | 0.898 | 9.4229 | 8.7094 | 8.7348 | 8.7124 | 8.6993 | -0.7135 (0.0117) -60.9 | -0.6880 (0.0126) -54.5 | -0.7104 (0.0112) -63.3 | +0.0255 (0.0068) +3.8 | +0.0030 (0.0028) +1.1 |
    | mixture 1/3/10 | Gaussian | 0.949 | 9.6263 | 8.9840 | 9.0065 | 8.9994 | 8.9727 | -0.6423 (0.0098) -65.3 | -0.6198 (0.0108) -57.3 | -0.6269 (0.0110) -56.9 | +0.0225 (0.0064) +3.5 | +0.0153 (0.0059) +2.6 |
    | mixture 1/3/10 | Gaussian | 1.000 | 9.7884 | 9.2259 | 9.2278 | 9.2303 | 9.2047 | -0.5624 (0.0191) -29.4 | -0.5606 (0.0157) -35.8 | -0.5581 (0.0151) -37.1 | +0.0019 (0.0073) +0.3 | +0.0043 (0.0072) +0.6 |
    | mixture 1/3/10 | Gaussian | 1.049 | 9.9561 | 9.4539 | 9.4398 | 9.4367 | 9.4187 | -0.5023 (0.0217) -23.2 | -0.5164 (0.0160) -32.4 | -0.5194 (0.0159) -32.8 | -0.0141 (0.0091) -1.6 | -0.0171 (0.0083) -2.1 |
    | mixture 1/3/10 | Gaussian | 1.103 | 10.0955 | 9.6485 | 9.6252 | 9.6212 | 9.6052 | -0.4470 (0.0148) -30.2 | -0.4703 (0.0127) -37.0 | -0.4743 (0.0124) -38.4 | -0.0233 (0.0072) -3.2 | -0.0273 (0.0055) -5.0 |
"""

from __future__ import annotations

import math
import sys
import time
from pathlib import Path

import numpy as np
from sklearn.covariance import LedoitWolf
from threadpoolctl import threadpool_limits

sys.path.insert(0, str(Path(__file__).resolve().parent))

from near_singular_ratio import (  # noqa: E402
    RATIOS,
    _Losses,
    _optimal_weight,
    _paired,
    cell_seed,
    setup,
)

from rmtclean._kernels import numba_threads  # noqa: E402
from rmtclean.rules._combine import (  # noqa: E402
    _both_rules,
    crossvalidated_linear_weight,
    plateau_phase,
)

CV_RATIOS = [0.9, 0.95, 1.0, 1.05, 1.1]
COLUMNS = ("LW", "stabilized", "cv5", "cv10", "comb*plat")
_SHORT = {"mixture 1/3/10": "mix", "AR(1) rho=0.5": "ar.5", "AR(1) rho=0.9": "ar.9"}


def _both(Xc: np.ndarray, p: int):
    """Eigenvectors, kernel and linear (value, null value) of centred rows."""
    U, ker, lin = _both_rules(
        Xc, float(Xc.shape[0] - 1), p, None, "stabilized", None, "benchmark"
    )
    return U, (ker.values, ker.null_value), (lin.values, lin.null_value)


def cv_weight(X: np.ndarray, n_folds: int) -> float:
    """Held-out Frobenius-optimal weight of linear shrinkage, in [0, 1].

    The library's :func:`rmtclean.rules._combine.crossvalidated_linear_weight`
    (what ``KernelShrink(near_singular="cross-validated")`` applies):
    contiguous folds in row order, each part centred by its own mean.
    """
    return crossvalidated_linear_weight(X, n_folds)


def draw_losses(design, T, dist, reps, seed):
    """Per-draw (Frobenius, MV) losses of COLUMNS and the two CV weights."""
    Sig = design.covariance
    N = design.n_features
    fro2, inv_trace = float(np.sum(Sig**2)), float(np.trace(np.linalg.inv(Sig)))
    rng = np.random.default_rng(seed)
    out = np.empty((reps, 2, len(COLUMNS)))
    weights = np.empty((reps, 3))
    cost = np.zeros(3)
    n = T - 1
    tau = plateau_phase(N / n)
    for r in range(reps):
        X = design.sample(
            T,
            distribution=dist,
            df=5 if dist == "student-t" else None,
            random_state=rng,
        )
        Xc = X - X.mean(0)
        t0 = time.perf_counter()
        U, (a, a0), (b, b0) = _both(Xc, N)
        cost[0] += time.perf_counter() - t0
        o = np.einsum("ij,ij->j", U, Sig @ U)
        loss = _Losses(o, float(np.trace(Sig)) - o.sum(), fro2, inv_trace, N)
        E = LedoitWolf().fit(X).covariance_
        Ei = np.linalg.inv(E)
        out[r, 0, 0] = np.sum((E - Sig) ** 2) / N
        out[r, 1, 0] = (np.trace(Ei @ Sig @ Ei) / N) / (np.trace(Ei) / N) ** 2 - (
            N / inv_trace
        )
        t0 = time.perf_counter()
        w5 = cv_weight(X, 5)
        t1 = time.perf_counter()
        w10 = cv_weight(X, 10)
        cost[1:] += (t1 - t0, time.perf_counter() - t1)
        w_star = _optimal_weight(a, a0, b, b0, loss)
        weights[r] = (w5, w10, w_star)
        est = {"stabilized": (a, a0)}
        for name, w in (("cv5", w5), ("cv10", w10), ("comb*plat", w_star)):
            t = tau * w
            est[name] = (
                a + t * (b - a),
                None if a0 is None else a0 + t * (b0 - a0),
            )
        for k, name in enumerate(COLUMNS[1:], start=1):
            out[r, 0, k] = loss.frobenius(*est[name])
            out[r, 1, k] = loss.min_variance(*est[name])
    return out, weights, cost


def main():
    args, designs = setup(__doc__.split("\n\n")[0])
    N = args.n_features
    cells = []
    total_cost = np.zeros(3)
    for name, design in designs.items():
        for dist in ("gaussian", "student-t"):
            for c in CV_RATIOS:
                i = RATIOS.index(c)  # the seeds of near_singular_ratio.py
                T = int(round(N / c)) + 1
                seed = cell_seed(args.seed, i, dist)
                loss, w, cost = draw_losses(design, T, dist, args.reps, seed)
                total_cost += cost
                label = "Gaussian" if dist == "gaussian" else "t5"
                cells.append((name, label, T, loss, w))
                print(f"# done {name} {label} {c}", file=sys.stderr, flush=True)
    base, k5, k10 = total_cost
    print(
        f"\n# cost over all draws: full-sample kernel + linear {base:.1f} s; "
        f"the weight with K = 5: {k5:.1f} s (x {k5 / base:.1f}), "
        f"K = 10: {k10:.1f} s (x {k10 / base:.1f})"
    )
    print("\nMean weight of linear shrinkage (before tau): cv5, cv10, infeasible w*\n")
    print("| design | data | N/n | tau | cv5 | cv10 | w* | corr(cv10, w*) |")
    print("|---|---|---|---|---|---|---|---|")
    for name, label, T, _, w in cells:
        cc = np.corrcoef(w[:, 1], w[:, 2])[0, 1] if w[:, 2].std() > 0 else math.nan
        print(
            f"| {name} | {label} | {N / (T - 1):.3f} | {plateau_phase(N / (T - 1)):.2f}"
            f" | {w[:, 0].mean():.3f} | {w[:, 1].mean():.3f} | {w[:, 2].mean():.3f}"
            f" | {cc:+.2f} |"
        )
    for j, title in enumerate(("Frobenius", "minimum-variance")):
        print(
            f"\n{title} loss, N = {N}, {args.reps} draws per row; paired "
            "differences: mean (SE) t\n"
        )
        print(
            "| design | data | N/n | "
            + " | ".join(COLUMNS)
            + " | stab - LW | cv5 - LW | cv10 - LW | cv5 - stab | cv10 - stab |"
        )
        print("|---" * (3 + len(COLUMNS) + 5) + "|")
        for name, label, T, loss, _ in cells:
            L = loss[:, j, :]
            means = " | ".join(f"{v:.4f}" for v in L.mean(0))
            diffs = [_paired(L[:, k], L[:, 0]) for k in (1, 2, 3)]
            diffs += [_paired(L[:, k], L[:, 1]) for k in (2, 3)]
            print(
                f"| {name} | {label} | {N / (T - 1):.3f} | {means} | "
                + " | ".join(diffs)
                + " |",
                flush=True,
            )
    print("\nCells (of 30) where the first is significantly worse, t > 2:\n")
    for j, title in enumerate(("Frobenius", "minimum-variance")):
        counts = []
        for k, ref, what in ((1, 0, "stab vs LW"), (2, 0, "cv5 vs LW"),
                             (3, 0, "cv10 vs LW"), (2, 1, "cv5 vs stab"),
                             (3, 1, "cv10 vs stab")):  # fmt: skip
            bad = [
                f"{_SHORT[name]}/{label}/{N / (T - 1):.2f}"
                for name, label, T, loss, _ in cells
                if _t(loss[:, j, k] - loss[:, j, ref]) > 2
            ]
            counts.append(
                f"{what}: {len(bad)}" + (f" ({', '.join(bad)})" if bad else "")
            )
        print(f"- {title}: " + "; ".join(counts))


def _t(diff: np.ndarray) -> float:
    se = diff.std(ddof=1) / math.sqrt(diff.size)
    return diff.mean() / se if se > 0 else 0.0


if __name__ == "__main__":
    with threadpool_limits(1), numba_threads(1):  # small problems
        main()

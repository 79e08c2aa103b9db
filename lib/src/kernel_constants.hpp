// kernel_constants: the polynomial coefficients and angle steps of the random-number transforms,
// shared by kernels_portable.cpp and kernels_avx2.cpp (the two must use the same values to give
// the same bits). Internal to the library.
#pragma once

namespace qamsight::detail::constants {

// fdlibm / musl e_log.c constants (minimax polynomial for ln(1+f) in s = f / (2 + f)).
constexpr double kLn2Hi = 6.93147180369123816490e-01;
constexpr double kLn2Lo = 1.90821492927058770002e-10;
constexpr double kLg1 = 6.666666666666735130e-01;
constexpr double kLg2 = 3.999999999940941908e-01;
constexpr double kLg3 = 2.857142874366239149e-01;
constexpr double kLg4 = 2.222219843214978396e-01;
constexpr double kLg5 = 1.818357216161805012e-01;
constexpr double kLg6 = 1.531383769920937332e-01;
constexpr double kLg7 = 1.479819860511658591e-01;

// fdlibm k_sin.c / k_cos.c polynomial coefficients, valid on [-pi/4, pi/4].
constexpr double kS1 = -1.66666666666666324348e-01;
constexpr double kS2 = 8.33333333332248946124e-03;
constexpr double kS3 = -1.98412698298579493134e-04;
constexpr double kS4 = 2.75573137070700676789e-06;
constexpr double kS5 = -2.50507602534068634195e-08;
constexpr double kS6 = 1.58969099521155010221e-10;
constexpr double kC1 = 4.16666666666666019037e-02;
constexpr double kC2 = -1.38888888888741095749e-03;
constexpr double kC3 = 2.48015872894767294178e-05;
constexpr double kC4 = -2.75573143513906633035e-07;
constexpr double kC5 = 2.08757232129817482790e-09;
constexpr double kC6 = -1.13596475577881948265e-11;

// 2 pi / 2^53: radians per unit of the 53-bit angle.
constexpr double kAngleStep = 6.283185307179586232 * 0x1p-53;

// Cephes single-precision log (ln(1+f) = f - f^2/2 + f^3 P(f) on [sqrt(1/2) - 1, sqrt(2) - 1]),
// sin and cos (on [-pi/4, pi/4]) coefficients, about 1 ulp each.
constexpr float kLogF[9] = {7.0376836292e-2f,  -1.1514610310e-1f, 1.1676998740e-1f,
                            -1.2420140846e-1f, 1.4249322787e-1f,  -1.6668057665e-1f,
                            2.0000714765e-1f,  -2.4999993993e-1f, 3.3333331174e-1f};
constexpr float kLn2HiF = 0.693359375f, kLn2LoF = -2.12194440e-4f;  // ln 2 = hi + lo
constexpr float kSinF0 = -1.9515295891e-4f, kSinF1 = 8.3321608736e-3f, kSinF2 = -1.6666654611e-1f;
constexpr float kCosF0 = 2.443315711809948e-5f, kCosF1 = -1.388731625493765e-3f, kCosF2 = 4.166664568298827e-2f;

// 2 pi / 2^24: radians per unit of the 24-bit angle.
constexpr float kAngleStepF = static_cast<float>(6.283185307179586232 * 0x1p-24);

}  // namespace qamsight::detail::constants

/**
 * Upper tail of the standard normal, Q(z) = P(Z > z) = erfc(z / sqrt 2) / 2, via the
 * complementary error function approximation of Numerical Recipes (Press et al. 2007, erfcc,
 * fractional error below 1.2e-7).
 */
export function normalUpperTail(z: number): number {
  const x = z / Math.SQRT2;
  const t = 1 / (1 + 0.5 * Math.abs(x));
  const y =
    t *
    Math.exp(
      -x * x -
        1.26551223 +
        t * (1.00002368 + t * (0.37409196 + t * (0.09678418 + t * (-0.18628806 + t * (0.27886807 + t * (-1.13520398 + t * (1.48851587 + t * (-0.82215223 + t * 0.17087277)))))))),
    );
  const erfc = x >= 0 ? y : 2 - y;
  return erfc / 2;
}

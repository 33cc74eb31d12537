/**
 * Zero-age main-sequence luminosity and radius as analytic functions of mass and metallicity,
 * Tout, Pols, Eggleton & Han 1996, MNRAS 281, 257 (their eqs. 1-2 and Table 1). Valid for
 * 0.1 <= M <= 100 M_sun and 1e-4 <= Z <= 0.03; outside that the functions return NaN.
 */

export const TOUT_MIN_MASS = 0.1;
export const TOUT_MAX_MASS = 100;
export const TOUT_MIN_Z = 1e-4;
export const TOUT_MAX_Z = 0.03;

/** Each coefficient is a quartic in z = log10(Z / 0.02): c0 + c1 z + c2 z^2 + c3 z^3 + c4 z^4. */
type Quartic = readonly [number, number, number, number, number];

const LUM: Record<'alpha' | 'beta' | 'gamma' | 'delta' | 'epsilon' | 'zeta' | 'eta', Quartic> = {
  alpha: [0.3970417, -0.32913574, 0.34776688, 0.37470851, 0.09011915],
  beta: [8.527626, -24.41225973, 56.43597107, 37.06152575, 5.4562406],
  gamma: [0.00025546, -0.00123461, -0.00023246, 0.00045519, 0.00016176],
  delta: [5.432889, -8.62157806, 13.44202049, 14.51584135, 3.39793084],
  epsilon: [5.563579, -10.32345224, 19.4432298, 18.97361347, 4.16903097],
  zeta: [0.7886606, -2.90870942, 6.54713531, 4.05606657, 0.53287322],
  eta: [0.00586685, -0.01704237, 0.03872348, 0.02570041, 0.00383376],
};

const RAD: Record<'theta' | 'iota' | 'kappa' | 'lambda' | 'mu' | 'nu' | 'xi' | 'omicron' | 'pi', Quartic> = {
  theta: [1.715359, 0.62246212, -0.92557761, -1.16996966, -0.30631491],
  iota: [6.597788, -0.42450044, -12.13339427, -10.73509484, -2.51487077],
  kappa: [10.08855, -7.11727086, -31.67119479, -24.24848322, -5.33608972],
  lambda: [1.012495, 0.3269969, -0.00923418, -0.03876858, -0.0041275],
  mu: [0.07490166, 0.02410413, 0.07233664, 0.03040467, 0.00197741],
  nu: [0.01077422, 0, 0, 0, 0],
  xi: [3.082234, 0.9447205, -2.15200882, -2.49219496, -0.63848738],
  omicron: [17.84778, -7.4534569, -48.96066856, -40.05386135, -9.09331816],
  pi: [0.00022582, -0.00186899, 0.00388783, 0.00142402, -0.00007671],
};

function quartic(c: Quartic, z: number): number {
  return c[0] + z * (c[1] + z * (c[2] + z * (c[3] + z * c[4])));
}

function inRange(massSun: number, z: number): boolean {
  return massSun >= TOUT_MIN_MASS && massSun <= TOUT_MAX_MASS && z >= TOUT_MIN_Z && z <= TOUT_MAX_Z;
}

/**
 * The quartics evaluated at one metallicity, memoised for the last Z asked: catalog loops call
 * these per row at one Z, and the 16 quartics would otherwise dominate the cost.
 */
function coefficientsAt<K extends string>(table: Record<K, Quartic>): (z: number) => Record<K, number> {
  let lastZ = NaN;
  let last: Record<K, number> | null = null;
  return (z) => {
    if (z !== lastZ || !last) {
      last = Object.fromEntries(Object.entries<Quartic>(table).map(([k, c]) => [k, quartic(c, z)])) as Record<K, number>;
      lastZ = z;
    }
    return last;
  };
}
const lumAt = coefficientsAt(LUM);
const radAt = coefficientsAt(RAD);

/** ZAMS luminosity in L_sun for mass M (M_sun) and metallicity Z (mass fraction, default 0.02). */
export function toutZamsLuminosity(massSun: number, metallicity = 0.02): number {
  if (!inRange(massSun, metallicity)) return NaN;
  const c = lumAt(Math.log10(metallicity / 0.02));
  const m = massSun;
  const m2 = m * m;
  const m3 = m2 * m;
  const m5 = m3 * m2;
  const sq = Math.sqrt(m);
  const num = c.alpha * m5 * sq + c.beta * m5 * m5 * m;
  const den = c.gamma + m3 + c.delta * m5 + c.epsilon * m5 * m2 + c.zeta * m5 * m3 + c.eta * m5 * m3 * m * sq;
  return num / den;
}

/** ZAMS radius in R_sun for mass M (M_sun) and metallicity Z (default 0.02). */
export function toutZamsRadius(massSun: number, metallicity = 0.02): number {
  if (!inRange(massSun, metallicity)) return NaN;
  const c = radAt(Math.log10(metallicity / 0.02));
  const m = massSun;
  const num = c.theta * m ** 2.5 + c.iota * m ** 6.5 + c.kappa * m ** 11 + c.lambda * m ** 19 + c.mu * m ** 19.5;
  const den = c.nu + c.xi * m ** 2 + c.omicron * m ** 8.5 + m ** 18.5 + c.pi * m ** 19.5;
  return num / den;
}

/**
 * Metallicity mass fraction Z from [Fe/H], scaled from Z_sun = 0.02 (the normalisation of the
 * Tout fit itself): Z = 0.02 * 10^[Fe/H]. Common practice; ignores alpha enhancement.
 */
export function metallicityFromFeH(feh: number): number {
  return 0.02 * Math.pow(10, feh);
}

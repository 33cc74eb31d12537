import { fmt, round6, rowFinding } from '../engine/findings.js';
import { usableValues } from '../engine/usable.js';
import type { Rule } from '../engine/types.js';
import { eddingtonPerSolarMass } from '../physics/eddington.js';

const ID = 'eddington-limit';

/**
 * The electron-scattering Eddington luminosity L_Edd = 4 pi G M c / kappa_es with
 * kappa_es = 0.02 (1 + X) m^2/kg bounds the luminosity of a star in hydrostatic equilibrium.
 * Above the X = 0 limit no composition helps; above the limit for the catalog's X the star needs
 * an unusual (hydrogen-poor) composition or the mass or luminosity is wrong.
 */
export const eddingtonLimit: Rule = {
  meta: {
    id: ID,
    title: 'Luminosity above the Eddington limit for the listed mass',
    severity: 'error',
    stage: 'judge',
    needs: ['mass', 'luminosity'],
    uses: ['hydrogenFraction', 'id'],
    params: [
      {
        name: 'hydrogenFraction',
        type: 'number',
        default: 0.7,
        min: 0,
        max: 1,
        description: 'Hydrogen mass fraction X used where no X column is bound (warning level).',
      },
      {
        name: 'sigmas',
        type: 'number',
        default: 3,
        min: 0,
        description: 'The star is judged at L minus this many lower errors and M plus this many upper errors.',
      },
    ],
    references: [
      { cite: 'Eddington 1926, The Internal Constitution of the Stars (the limit itself)' },
      { cite: 'IAU 2015 Resolution B3 (nominal (GM)_sun, L_sun); CODATA 2018 (c)' },
      {
        cite: 'Crowther et al. 2010, MNRAS 408, 731 (R136 stars near 0.5-0.9 of the limit)',
        note: 'real very massive stars sit close to the limit, so closeness alone is not flagged',
      },
    ],
    doc: {
      catches:
        'Rows whose luminosity is above the electron-scattering Eddington luminosity for their listed mass: an error above the hydrogen-free (X = 0) limit, which no composition allows, a warning above the limit for the hydrogen fraction of the catalog.',
      why:
        'Radiation pressure on free electrons balances gravity at L_Edd = 4 pi G M c / kappa_es, kappa_es = 0.02 (1 + X) m^2/kg, which is 38,414 L_sun per M_sun for X = 0.7 and 65,304 L_sun per M_sun for X = 0. A star above it would blow itself apart; in a catalog it almost always means a mistyped mass (a dropped digit), a luminosity in the wrong unit, or two columns swapped.',
      fires:
        'M = 6.2 M_sun, L = 7.9e5 L_sun: L_Edd(X = 0) = 4.0e5 L_sun, so even at L - 3 sigma the star is about twice the limit (error).',
      silent:
        'M = 60 M_sun, L = 5.1e5 L_sun: the X = 0.7 limit is 2.3e6 L_sun, Gamma_e = 0.22, as expected for an O star.',
      cautions:
        'Only electron scattering is counted; real massive stars sit at Gamma_e = 0.3-0.9, so being near the limit is not flagged. Wolf-Rayet and other hydrogen-poor stars may legitimately pass the X = 0.7 limit (warning only); the error level uses X = 0. Masses of very massive stars in the literature differ by factors of 1.5. A luminosity whose error reaches zero (e_L >= L) has no lower bound at L - k sigma and is never flagged unless sigmas = 0.',
    },
  },
  start(ctx) {
    const defaultX = ctx.params.hydrogenFraction as number;
    const k = ctx.params.sigmas as number;
    const perMassZeroX = eddingtonPerSolarMass(0);
    const perMassDefault = eddingtonPerSolarMass(defaultX);
    let hydrogenPoorLimitHits = 0;
    return {
      check(batch, out, stats) {
        const mass = batch.quantities.mass!;
        const lum = batch.quantities.luminosity!;
        const m = usableValues(batch, 'mass')!;
        const l = usableValues(batch, 'luminosity')!;
        const xCol = batch.quantities.hydrogenFraction?.value ?? null;
        const mErrHi = mass.errHi;
        const logL = lum.log!;
        const logErrLo = lum.logErrLo ?? null;
        for (let i = 0; i < batch.length; i++) {
          const mi = m[i];
          const li = l[i];
          if (!(mi > 0) || !(li > 0)) {
            stats.skip(!Number.isFinite(mi) || !Number.isFinite(li) ? 'mass or luminosity missing or unusable' : 'mass or luminosity not positive');
            continue;
          }
          stats.checked++;
          const dm = mErrHi && Number.isFinite(mErrHi[i]) ? mErrHi[i] : 0;
          // An error reaching down to zero (e_L >= L) is an unbounded log error: such a row can
          // never be shown above the limit at L - k sigma.
          const e = logErrLo ? logErrLo[i] : NaN;
          const dlog = e === Infinity ? Infinity : Number.isFinite(e) ? e : 0;
          const mHigh = mi + k * dm;
          const lLow = k > 0 ? Math.pow(10, logL[i] - k * dlog) : li;
          const limit0 = perMassZeroX * mHigh;
          const xi = xCol && xCol[i] >= 0 && xCol[i] <= 1 ? xCol[i] : defaultX;
          const perMassX = xCol && xi !== defaultX ? eddingtonPerSolarMass(xi) : perMassDefault;
          const limitX = perMassX * mHigh;
          if (lLow <= limitX) continue;
          const impossible = lLow > limit0;
          if (!impossible) hydrogenPoorLimitHits++;
          const gamma = li / (perMassX * mi);
          const margin = k > 0 && (dm > 0 || dlog > 0) ? ` (still ${fmt(lLow / (impossible ? limit0 : limitX), 3)} times the limit at L - ${k} sigma, M + ${k} sigma)` : '';
          const minMass = lLow / perMassX;
          out.push(
            rowFinding(batch, i, {
              rule: ID,
              severity: impossible ? 'error' : 'warning',
              columns: [mass.column, lum.column],
              values: { [mass.column]: round6(mass.raw[i]), [lum.column]: round6(lum.raw[i]), gammaE: round6(gamma), X: xi },
              expected: { max: round6((impossible ? perMassZeroX : perMassX) * mi) ?? undefined, unit: 'solLum' },
              message: impossible
                ? `L = ${fmt(li)} L_sun is above the Eddington luminosity for any composition (${fmt(perMassZeroX * mi)} L_sun at X = 0) for M = ${fmt(mi)} M_sun${margin}; the mass or the luminosity is wrong`
                : `L = ${fmt(li)} L_sun is ${fmt(gamma, 3)} times the Eddington luminosity for M = ${fmt(mi)} M_sun at X = ${xi} (${fmt(perMassX * mi)} L_sun)${margin}; only a hydrogen-poor star could do this`,
              suggestion: {
                column: mass.column,
                value: round6(minMass) ?? minMass,
                unit: 'solMass',
                text: `check the mass: this luminosity needs at least M = ${fmt(minMass)} M_sun at X = ${xi}, or check the luminosity's unit`,
              },
            }),
          );
        }
      },
      save: () => ({ hydrogenPoorLimitHits }),
      absorb(state) {
        hydrogenPoorLimitHits += (state as { hydrogenPoorLimitHits: number }).hydrogenPoorLimitHits;
      },
      summary() {
        return {
          hydrogenFraction: defaultX,
          eddingtonPerSolarMassX: round6(perMassDefault),
          eddingtonPerSolarMassX0: round6(perMassZeroX),
          aboveCatalogLimitOnly: hydrogenPoorLimitHits,
        };
      },
    };
  },
};

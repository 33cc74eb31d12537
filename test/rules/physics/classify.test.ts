import { describe, expect, it } from 'vitest';
import {
  CLASS_RANGES,
  MS_LOGG_MAX,
  MS_LOGG_MIN,
  STAR_CLASS_NAMES,
  STELLAR_LIMITS,
  StarClass,
  classFromLogg,
  classFromText,
  classifyStar,
  starClasses,
} from '../../../rules/physics/classify.js';
import { loggFromMassRadius } from '../../../rules/physics/stellar.js';
import { makeBatch } from '../../helpers/batch.js';

describe('classFromText', () => {
  it('reads Morgan-Keenan luminosity classes after a spectral type, with peculiarity flags', () => {
    // Spectral-type strings as the NASA, PHL, CARMENES and MWDD tables write them (PROVENANCE files).
    for (const t of ['G7 V', 'M4.0 V', 'M1.5V', 'M1/M2 V', 'M4.5Ve', 'A0Va', 'O3V((f*))', 'V', 'dK7', '   dK7', 'dMe', 'MS', 'main sequence'])
      expect(classFromText(t), t).toBe(StarClass.MainSequence);
    for (const t of ['K0IIIvar', 'K2 II', 'K5 III', 'B2 IV', 'G8IV', 'F9 IV-V', 'B0.5Ia', 'O9.7Iab', 'K3IIIb', 'K1.5IIIFe-0.5', 'III', 'giant', 'subgiant', 'red giant branch'])
      expect(classFromText(t), t).toBe(StarClass.Giant);
  });

  it('white dwarfs are capital D types (DA, DC, DAH ...), WD and composites; lower-case d is a dwarf', () => {
    for (const t of ['DA', 'DA:', 'DC-IRfaint', 'DAH', 'DZ', 'DQpec', 'DA+M4', 'DA5.0', 'WD', 'WD+M', 'white dwarf', 'He-DA', 'D'])
      expect(classFromText(t), t).toBe(StarClass.WhiteDwarf);
    expect(classFromText('dK7')).toBe(StarClass.MainSequence);
  });

  it('hot subdwarfs, brown dwarfs, and what it cannot tell', () => {
    for (const t of ['sdB', 'sdBV', 'sdOB', 'sdB+WD']) expect(classFromText(t), t).toBe(StarClass.Subdwarf);
    for (const t of ['T8.5', 'L2.5', 'L3beta', 'Y0']) expect(classFromText(t), t).toBe(StarClass.BrownDwarf);
    // sdA is not a hot subdwarf, esdM a metal-poor dwarf; a bare type (K0, G) has no luminosity class.
    for (const t of ['sdA:', 'esdM2.5', 'K0', 'G', 'M4', 'F8', 'CND', 'IRfaint', 'M9-L1', '', null]) expect(classFromText(t), String(t)).toBe(StarClass.Unknown);
  });
});

describe('classifyStar from values', () => {
  it('keeps classFromLogg: white dwarf >= 6.5, subdwarf above the dwarf band, giant below it', () => {
    expect([MS_LOGG_MIN, MS_LOGG_MAX]).toEqual([3.5, 5.5]);
    expect(classFromLogg(8.0)).toBe(StarClass.WhiteDwarf);
    expect(classFromLogg(6.0)).toBe(StarClass.Subdwarf);
    expect(classFromLogg(4.44)).toBe(StarClass.MainSequence);
    expect(classFromLogg(2.5)).toBe(StarClass.Giant);
    expect(classFromLogg(NaN)).toBe(StarClass.Unknown);
  });

  it('Sirius B from M and R is a white dwarf, Sirius A a dwarf', () => {
    // Sirius B M = 1.018, R = 0.008098 (logg 8.63) and Sirius A M = 2.063, R = 1.713 (logg 4.285):
    // physics-reference.md §6, Bond et al. 2017.
    expect(loggFromMassRadius(1.018, 0.008098)).toBeCloseTo(8.629, 3);
    expect(classifyStar(null, NaN, 1.018, 0.008098)).toBe(StarClass.WhiteDwarf);
    expect(classifyStar(null, NaN, 2.063, 1.713, 9845)).toBe(StarClass.MainSequence);
  });

  it('an ELM white dwarf (logg 5.48, 11 288 K) is not a dwarf, and a hot subdwarf is told from it by Teff', () => {
    // SDSS J0917+46: M = 0.17, logg 5.48, Teff 11 288 K (Kilic et al. 2007, physics-reference.md §6).
    expect(classifyStar(null, 5.48, 0.17, NaN, 11288)).toBe(StarClass.WhiteDwarf);
    // Without Teff logg 5.48 alone reads as a dwarf (the old behaviour, kept).
    expect(classifyStar(null, 5.48, 0.17, NaN)).toBe(StarClass.MainSequence);
    // V0391 Peg: Teff 29 300 K, logg 5.4, R 0.23, M 0.5 (PHL PROVENANCE).
    expect(classifyStar(null, 5.4, 0.5, 0.23, 29300)).toBe(StarClass.Subdwarf);
    // A cool dwarf with logg 5.4 stays a dwarf (Kepler-27: 5400 K, logg 5.4, PHL).
    expect(classifyStar(null, 5.4, 0.65, 0.59, 5400)).toBe(StarClass.MainSequence);
  });

  it('radius alone: <= 0.05 R_sun is a white dwarf, >= 30 R_sun a giant; small and hot is compact', () => {
    // DP Leo: R 0.01, Teff 13 500 K, no mass or logg used (PHL PROVENANCE).
    expect(classifyStar(null, NaN, NaN, 0.01, 13500)).toBe(StarClass.WhiteDwarf);
    // HD 81817: R 83.8 R_sun (PHL PROVENANCE).
    expect(classifyStar(null, NaN, NaN, 83.8, 4140)).toBe(StarClass.Giant);
    // 2MASS J19383260+4603591: R 0.2, Teff 29 564 K (PHL); the Sun's R and Teff (IAU 2015 B3) decide nothing alone.
    expect(classifyStar(null, NaN, NaN, 0.2, 29564)).toBe(StarClass.Subdwarf);
    expect(classifyStar(null, NaN, NaN, 1.0, 5772)).toBe(StarClass.Unknown);
  });

  it('edge: a label beats the values; impossible values are not used to classify', () => {
    // CARMENES V577 Per: K2 V with a grid logg of 2.5 (PROVENANCE) stays a dwarf.
    expect(classifyStar('K2 V', 2.5, 0.82, 0.783, 5000)).toBe(StarClass.MainSequence);
    // A logg of 99.99 (a missing-value code, common practice) says nothing; the Sun's M and R (IAU 2015 B3) decide.
    expect(classifyStar(null, 99.99, 1, 1)).toBe(StarClass.MainSequence);
    // A hot star of 1 R_sun is not compact whatever its logg says (HIP 79098 AB in wild-mixed-units
    // has M 3.75, R 1.06: logg 4.98 from M and R).
    expect(classifyStar(null, NaN, 3.75, 1.06, 11000)).toBe(StarClass.MainSequence);
    expect(classifyStar(null, 5.2, NaN, 1.06, 11000)).toBe(StarClass.MainSequence);
  });
});

describe('starClasses and the published ranges', () => {
  it('classifies every row of a batch once, with Teff when bound', () => {
    // Invented white dwarf (logg 8.0) and dwarf; the ELM white dwarf of Kilic et al. 2007 (§6); a K giant with an invented logg.
    const b = makeBatch({ logg: { values: [8.0, 4.4, 5.48, 1.2] }, teff: { values: [12000, 5800, 11288, 4000] } }, { stage: ['', '', '', 'K0 III'] });
    expect(Array.from(starClasses(b)).map((c) => STAR_CLASS_NAMES[c])).toEqual(['white dwarf', 'main sequence', 'white dwarf', 'giant or subgiant']);
    expect(starClasses(b)).toBe(starClasses(b));
  });

  it('limits come from physics-reference.md §6', () => {
    // logg of 1.4 M_sun at 0.0025 R_sun (cold mass-radius relation, derived in §6): 9.79.
    expect(loggFromMassRadius(1.4, 0.0025)).toBeCloseTo(9.788, 2);
    expect(STELLAR_LIMITS.logg!.max).toBe(9.8);
    expect(STELLAR_LIMITS.mass!.max).toBe(300);
    // White dwarfs: 0.17 M_sun ELM (Kilic et al. 2007) inside, Chandrasekhar 1.38-1.46 the ceiling.
    expect(CLASS_RANGES[StarClass.WhiteDwarf]!.mass!.min).toBeLessThan(0.17);
    expect(CLASS_RANGES[StarClass.WhiteDwarf]!.mass!.max).toBe(1.46);
    // Main-sequence Teff: Mamajek M9.5V 2330 K and O3V 45 900 K inside 2300-55 000 K.
    const ms = CLASS_RANGES[StarClass.MainSequence]!.teff!;
    expect(ms.min <= 2330 && ms.max >= 45900).toBe(true);
  });
});

/**
 * Energy units, temperature and the transition-state-theory prefactor.
 *
 * Constants: CODATA 2018 (Tiesinga et al., Rev. Mod. Phys. 93, 025010 (2021)). Since the 2019
 * SI redefinition h, k_B, N_A and e are exact; the hartree energy is the CODATA 2018
 * recommended value. 1 thermochemical calorie = 4.184 J exactly (by definition).
 *
 * Every unit is converted through molar energy (J/mol): a per-particle energy E is E·N_A per mole.
 * `K` is an energy written as a temperature (E/k_B), `kT` a multiple of k_B·T at the chosen
 * temperature, `none` an energy of unknown unit (no conversion, no thermodynamics).
 */
import { InputError } from '../errors.js';

export const CODATA_EDITION = 'CODATA 2018';

export const CODATA_2018 = {
  /** Planck constant, J s (exact). */
  h: 6.62607015e-34,
  /** Boltzmann constant, J/K (exact). */
  kB: 1.380649e-23,
  /** Avogadro constant, 1/mol (exact). */
  NA: 6.02214076e23,
  /** Elementary charge, C (exact). */
  e: 1.602176634e-19,
  /** Hartree energy, J (CODATA 2018 recommended value, relative uncertainty 1.9e-12). */
  hartree: 4.3597447222071e-18,
  /** Thermochemical calorie, J (exact by definition). */
  calorie: 4.184,
} as const;

/** Molar gas constant R = N_A·k_B, J/(mol K). */
export const GAS_CONSTANT = CODATA_2018.NA * CODATA_2018.kB;

export type EnergyUnit = 'kJ/mol' | 'kcal/mol' | 'eV' | 'hartree' | 'kT' | 'K' | 'none';
export const ENERGY_UNITS: readonly EnergyUnit[] = ['kJ/mol', 'kcal/mol', 'eV', 'hartree', 'kT', 'K', 'none'];

const ALIASES: Record<string, EnergyUnit> = {
  'kj/mol': 'kJ/mol', kjmol: 'kJ/mol', 'kj mol-1': 'kJ/mol',
  'kcal/mol': 'kcal/mol', kcalmol: 'kcal/mol', 'kcal mol-1': 'kcal/mol',
  ev: 'eV', hartree: 'hartree', eh: 'hartree', ha: 'hartree',
  kt: 'kT', k: 'K', kelvin: 'K', none: 'none',
};

/** Parse a unit name (case-insensitive, a few common spellings); unknown → InputError. */
export function parseEnergyUnit(s: string | undefined, option = '--units'): EnergyUnit {
  const u = ALIASES[(s ?? '').trim().toLowerCase()];
  if (u === undefined) {
    throw new InputError(`${option} must be one of ${ENERGY_UNITS.join(', ')}, got '${s}'`);
  }
  return u;
}

/** Temperatures accepted, in kelvin: kT from 8.3e-6 to 831 kJ/mol, beyond which rates and populations overflow or mean nothing. */
export const TEMPERATURE_RANGE: [number, number] = [0.001, 100000];

/** Check a temperature in kelvin: finite and within TEMPERATURE_RANGE. */
export function checkTemperature(T: number, option = '--temperature'): number {
  if (!Number.isFinite(T) || !(T > 0)) throw new InputError(`${option} must be a temperature in kelvin above 0, got ${T}`);
  if (T < TEMPERATURE_RANGE[0] || T > TEMPERATURE_RANGE[1]) {
    throw new InputError(
      `${option} must lie between ${TEMPERATURE_RANGE[0]} and 100 000 K, got ${T}: ` +
        'beyond that kT is below 1e-5 or above 831 kJ/mol (more than any bond), and Boltzmann factors and rates overflow or mean nothing',
    );
  }
  return T;
}

/** J/mol per one `unit` at temperature T (kelvin); null for 'none'. */
export function joulesPerMole(unit: EnergyUnit, T: number): number | null {
  switch (unit) {
    case 'kJ/mol': return 1000;
    case 'kcal/mol': return 1000 * CODATA_2018.calorie;
    case 'eV': return CODATA_2018.e * CODATA_2018.NA;
    case 'hartree': return CODATA_2018.hartree * CODATA_2018.NA;
    case 'K': return GAS_CONSTANT;
    case 'kT': return GAS_CONSTANT * T;
    case 'none': return null;
  }
}

/** Factor f with E[to] = f·E[from]; InputError when only one side is 'none'. */
export function conversionFactor(from: EnergyUnit, to: EnergyUnit, T: number): number {
  if (from === to) return 1;
  const a = joulesPerMole(from, T), b = joulesPerMole(to, T);
  if (a === null || b === null) {
    throw new InputError(`cannot convert energies ${from === 'none' ? 'of unknown unit' : `from ${from}`} to ${to}: give the input unit with --units (one of ${ENERGY_UNITS.filter((u) => u !== 'none').join(', ')})`);
  }
  return a / b;
}

/** k_B·T in `unit` (null for 'none'). */
export function kTIn(unit: EnergyUnit, T: number): number | null {
  const j = joulesPerMole(unit, T);
  return j === null ? null : (GAS_CONSTANT * T) / j;
}

/** Eyring prefactor k_B·T/h in 1/s (transmission coefficient 1). */
export function eyringPrefactor(T: number): number {
  return (CODATA_2018.kB * T) / CODATA_2018.h;
}

/**
 * Transition-state-theory rate constant k = (k_B·T/h)·exp(−ΔE/k_B·T) in 1/s for a barrier ΔE given
 * in units of k_B·T. An order-of-magnitude estimate: the barrier stands in for the free energy of
 * activation and the transmission coefficient is taken as 1.
 */
export function eyringRate(barrierInKT: number, T: number): number {
  return eyringPrefactor(T) * Math.exp(-barrierInKT);
}

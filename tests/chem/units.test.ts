import { describe, it, expect } from 'vitest';
import {
  CODATA_2018, GAS_CONSTANT, conversionFactor, eyringPrefactor, eyringRate, joulesPerMole, kTIn, parseEnergyUnit, checkTemperature,
} from '../../src/chem/units.js';
import { InputError } from '../../src/errors.js';
import { mbReference } from './mb.js';

// Source: CODATA 2018 as tabulated by SciPy (scipy.constants 1.10.1), written by
// tests/reference/mueller_brown.py into fixtures/chem/mueller-brown.json.
const scipy = mbReference().codata as Record<string, number>;

describe('constants and energy units', () => {
  it('uses the CODATA 2018 values SciPy tabulates', () => {
    expect(String(mbReference().codata.edition)).toMatch(/CODATA 2018/);
    expect(CODATA_2018.h).toBe(scipy.h);
    expect(CODATA_2018.kB).toBe(scipy.k_B);
    expect(CODATA_2018.NA).toBe(scipy.N_A);
    expect(CODATA_2018.e).toBe(scipy.e);
    expect(CODATA_2018.hartree).toBe(scipy.hartree);
    expect(GAS_CONSTANT).toBeCloseTo(scipy.R, 9); // SciPy rounds R to 10 digits
  });

  it('converts between units through molar energy', () => {
    // Source: definition of the thermochemical calorie, 1 kcal = 4.184 kJ exactly.
    expect(conversionFactor('kcal/mol', 'kJ/mol', 300)).toBe(4.184);
    // Source: CODATA 2018 (SciPy) — 1 eV per particle = e·N_A J/mol = 96.485 332 12… kJ/mol.
    expect(conversionFactor('eV', 'kJ/mol', 300)).toBeCloseTo((scipy.e * scipy.N_A) / 1000, 10);
    expect(conversionFactor('eV', 'kJ/mol', 300)).toBeCloseTo(96.48533212, 7);
    // Source: CODATA 2018 (SciPy) — 1 hartree = E_h·N_A = 2625.499 639… kJ/mol.
    expect(conversionFactor('hartree', 'kJ/mol', 300)).toBeCloseTo((scipy.hartree * scipy.N_A) / 1000, 8);
    expect(conversionFactor('hartree', 'kcal/mol', 300)).toBeCloseTo((scipy.hartree * scipy.N_A) / 4184, 8);
    expect(conversionFactor('hartree', 'eV', 300)).toBeCloseTo(scipy.hartree / scipy.e, 10);
    // Source: definition — an energy written as a temperature E/k_B; 1 K = R J/mol.
    expect(joulesPerMole('K', 300)).toBeCloseTo(scipy.R, 8);
    // kT at T in kJ/mol is R·T/1000: 2.494 339 kJ/mol at 300 K (R from CODATA 2018 via SciPy)
    expect(kTIn('kJ/mol', 300)).toBeCloseTo((scipy.R * 300) / 1000, 9);
    expect(kTIn('kT', 412)).toBe(1);
    expect(kTIn('K', 298.15)).toBeCloseTo(298.15, 9);
    expect(kTIn('none', 300)).toBeNull();
    // round trip
    expect(conversionFactor('eV', 'kcal/mol', 300) * conversionFactor('kcal/mol', 'eV', 300)).toBeCloseTo(1, 14);
    expect(() => conversionFactor('none', 'kJ/mol', 300)).toThrow(InputError);
  });

  it('Eyring prefactor k_B·T/h at 298.15 K ≈ 6.21e12 per second', () => {
    // Source: Eyring equation with CODATA 2018 k_B and h (SciPy's value in the fixture).
    expect(eyringPrefactor(298.15)).toBeCloseTo(scipy.eyringPrefactor298_15, -2);
    expect(eyringPrefactor(298.15) / 1e12).toBeCloseTo(6.21, 2);
    expect(eyringRate(0, 298.15)).toBe(eyringPrefactor(298.15));
    // a barrier of 10 kT slows the rate by e^10
    expect(eyringRate(10, 300) / eyringPrefactor(300)).toBeCloseTo(Math.exp(-10), 15);
  });

  it('refuses unknown units and non-positive temperatures', () => {
    expect(parseEnergyUnit('KCAL/MOL')).toBe('kcal/mol');
    expect(parseEnergyUnit('Eh')).toBe('hartree');
    expect(() => parseEnergyUnit('furlongs')).toThrow(/--units must be one of kJ\/mol, kcal\/mol, eV, hartree, kT, K, none/);
    expect(() => checkTemperature(0)).toThrow(InputError);
    expect(() => checkTemperature(-5)).toThrow(InputError);
    expect(() => checkTemperature(NaN)).toThrow(InputError);
  });
});

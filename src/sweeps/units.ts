/** Signal and time units understood by fascicle. */
import { OptionError } from '../errors';

export type SignalUnit = 'V' | 'mV' | 'uV';
export const SIGNAL_UNITS: readonly SignalUnit[] = ['V', 'mV', 'uV'];
const SIGNAL_SCALE: Record<SignalUnit, number> = { V: 1, mV: 1e-3, uV: 1e-6 };

export type TimeUnit = 's' | 'ms' | 'us';
const TIME_TO_MS: Record<TimeUnit, number> = { s: 1000, ms: 1, us: 1e-3 };

/** Parse a signal unit label; accepts µV and μV as uV. Returns undefined when unknown. */
export function parseSignalUnit(label: string): SignalUnit | undefined {
  const s = label.trim().replace(/[µμ]/g, 'u');
  return (SIGNAL_UNITS as readonly string[]).includes(s) ? (s as SignalUnit) : undefined;
}

/** Parse a time unit label; accepts µs and μs as us, and 'sec', 'msec'. */
export function parseTimeUnit(label: string): TimeUnit | undefined {
  const s = label.trim().replace(/[µμ]/g, 'u').toLowerCase();
  if (s === 's' || s === 'sec') return 's';
  if (s === 'ms' || s === 'msec') return 'ms';
  if (s === 'us' || s === 'usec') return 'us';
  return undefined;
}

/** Multiply a value in `from` units by this factor to get `to` units. */
export function signalFactor(from: SignalUnit, to: SignalUnit): number {
  if (!(from in SIGNAL_SCALE) || !(to in SIGNAL_SCALE))
    throw new OptionError(`unknown signal unit: ${from} or ${to}; must be one of V, mV, uV`);
  return SIGNAL_SCALE[from] / SIGNAL_SCALE[to];
}

export function timeToMs(unit: TimeUnit): number {
  return TIME_TO_MS[unit];
}

/** Split a header such as `time (ms)` or `signal [mV]` into name and unit. */
export function splitHeader(h: string): { name: string; unit?: string } {
  const m = /^\s*(.*?)\s*[([]\s*([^)\]]*?)\s*[)\]]\s*$/.exec(h);
  if (m) return { name: m[1], unit: m[2] };
  return { name: h.trim() };
}

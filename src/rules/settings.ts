/** A check's setting from the keys rule files gave it (pure; shared by load and select). */
import type { Check, Severity } from '../checks/types.js';
import type { CheckSetting } from './types.js';

/** The keys a check's settings may have: severity and its options. */
export function settingKeys(check: Check<any>): string[] {
  return ['severity', ...Object.keys(check.options)];
}

/**
 * The keys of a settings map that the check defines, copied (never a key the registry
 * does not know, so nothing from a file can reach an object's prototype).
 */
export function knownSettings(check: Check<any>, value: Record<string, unknown>): Map<string, unknown> {
  const out = new Map<string, unknown>();
  for (const key of settingKeys(check)) if (Object.hasOwn(value, key)) out.set(key, structuredClone(value[key]));
  return out;
}

/** A check's setting: its defaults overlaid with the keys set, severity else its default. */
export function settingFrom(check: Check<any>, set: ReadonlyMap<string, unknown>): CheckSetting {
  const options: Record<string, unknown> = {};
  const defaults = check.defaults as Record<string, unknown>;
  for (const key of new Set([...Object.keys(check.options), ...Object.keys(defaults)])) {
    if (set.has(key)) options[key] = structuredClone(set.get(key));
    else if (defaults[key] !== undefined) options[key] = structuredClone(defaults[key]);
  }
  return { severity: (set.get('severity') as Severity | undefined) ?? check.defaultSeverity, options };
}

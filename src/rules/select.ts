/**
 * Which checks run on one channel: the rule file's `checks`, then every matching
 * `channels:` entry in order (docs/rule-files.md). Pure: no fs, no process.
 */
import { checks, getCheck } from '../checks/registry.js';
import { settingFrom } from './settings.js';
import type { ChannelSelector, CheckSetting, ResolvedRules } from './types.js';

export { globMatch } from './glob.js';
import { globMatch } from './glob.js';

interface ChannelFacts {
  name: string;
  unit?: string;
  sensor?: string;
  group?: string;
}

/** Whether every field the selector gives matches the channel (a list: any of its values). */
export function selectorMatches(selector: ChannelSelector, channel: ChannelFacts): boolean {
  const list = (v: string | string[]) => (Array.isArray(v) ? v : [v]);
  if (selector.name !== undefined && !list(selector.name).some((g) => globMatch(g, channel.name))) return false;
  // Sensor types, units and groups are words people type in varying case ("Accelerometer", "PA").
  for (const field of ['sensor', 'unit', 'group'] as const) {
    const wanted = selector[field];
    if (wanted === undefined) continue;
    const actual = channel[field];
    if (actual === undefined) return false;
    const lower = actual.toLowerCase();
    if (!list(wanted).some((w) => w.toLowerCase() === lower)) return false;
  }
  return true;
}

/**
 * The checks to run on a channel, in registry order: the file's `checks`, then each
 * matching `channels:` entry in order. `off` removes a check; settings replace keys of the
 * current setting, or of the check's defaults when it was off. The result is a fresh copy.
 */
export function checksForChannel(rules: ResolvedRules, channel: ChannelFacts): Record<string, CheckSetting> {
  const current = new Map<string, CheckSetting>();
  for (const [id, setting] of Object.entries(rules.checks)) {
    current.set(id, { severity: setting.severity, options: structuredClone(setting.options) });
  }
  for (const rule of rules.channels) {
    if (!selectorMatches(rule.match, channel)) continue;
    for (const [id, override] of Object.entries(rule.checks)) {
      if (override === false) {
        current.delete(id);
        continue;
      }
      const check = getCheck(id);
      if (check === undefined) throw new RangeError(`${rule.source}: unknown check "${id}"`);
      const base = current.get(id) ?? settingFrom(check, new Map());
      const options = structuredClone(base.options);
      let severity = base.severity;
      for (const [key, value] of Object.entries(override)) {
        if (key === 'severity') severity = value as CheckSetting['severity'];
        else if (Object.hasOwn(check.options, key)) options[key] = structuredClone(value);
      }
      current.set(id, { severity, options });
    }
  }
  const out: Record<string, CheckSetting> = {};
  for (const check of checks) {
    const setting = current.get(check.id);
    if (setting !== undefined) out[check.id] = setting;
  }
  return out;
}

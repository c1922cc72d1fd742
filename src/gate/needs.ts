import { getCheck } from '../checks/registry.js';
import type { ChannelInfo } from '../readers/types.js';
import { checksForChannel } from '../rules/select.js';
import type { ResolvedRules } from '../rules/types.js';
import { unionNeeds, type SegmentNeeds } from '../stats/segment-analyses.js';

/**
 * What the checks that will run on a recording's channels need computed on sampled
 * segments: the union over its channels of each check's `needs` for that channel's
 * settings. Known once the recording is opened (channel rules select by name, sensor ...).
 */
export function segmentNeedsFor(rules: ResolvedRules, channels: readonly ChannelInfo[]): SegmentNeeds {
  let needs: SegmentNeeds = {};
  for (const channel of channels) {
    for (const [id, setting] of Object.entries(checksForChannel(rules, channel))) {
      const check = getCheck(id);
      if (check?.needs) needs = unionNeeds(needs, check.needs(setting.options));
    }
  }
  return needs;
}

/**
 * The alert-grouping options shared by `board`, `demo` and `alerts`: which sensors form one asset
 * (an id prefix depth, or globs) and how close together their alerts must be raised to form a group.
 */
import { parseDuration } from '../../libs/config/duration.js';
import {
  DEFAULT_GROUP_RULE,
  groupRuleProblem,
  GROUP_LIMITS,
  type GroupRule,
} from '../../libs/board/groups.js';
import { ENV } from '../config/env.js';
import { parseNumber, stringOption, usageError, type ParsedArgs } from '../setup/args.js';

export const GROUP_ARG_OPTIONS = {
  'group-depth': { type: 'string' },
  'group-glob': { type: 'string', multiple: true },
  'group-window': { type: 'string' },
} as const;

/** Help lines for the grouping options (same in every command that has them). */
export const GROUP_HELP = `  --group-depth N       sensors sharing the first N id segments are one asset (default ${DEFAULT_GROUP_RULE.depth}; 0 = off,
                        or ${ENV.groupDepth})
  --group-glob GLOB     sensors matching GLOB are one asset per leading segments, e.g. "line-1/chiller/**"
                        (repeatable, tried before the depth; or ${ENV.groupGlobs}, comma-separated)
  --group-window DUR    alerts raised within DUR of an asset's first-out form one group (default 5m,
                        or ${ENV.groupWindow})`;

/** The grouping rule from the command line, then the environment, then the defaults. */
export function readGroupRule(args: ParsedArgs, env: NodeJS.ProcessEnv, cmd: string): GroupRule {
  const depthRaw = stringOption(args, 'group-depth', cmd) ?? env[ENV.groupDepth];
  const depth =
    depthRaw === undefined || depthRaw === ''
      ? DEFAULT_GROUP_RULE.depth
      : parseNumber(depthRaw, 'group-depth', { whole: true, min: 0, max: GROUP_LIMITS.maxDepth }, cmd) ||
        null;
  const globArg = args.values['group-glob'];
  const globs = Array.isArray(globArg)
    ? globArg.map(String)
    : (env[ENV.groupGlobs] ?? '')
        .split(',')
        .map((g) => g.trim())
        .filter((g) => g.length > 0);
  const windowRaw = stringOption(args, 'group-window', cmd) ?? env[ENV.groupWindow];
  let windowMs = DEFAULT_GROUP_RULE.windowMs;
  if (windowRaw !== undefined && windowRaw !== '') {
    const parsed = parseDuration(windowRaw);
    if (parsed === null)
      usageError(`--group-window must be a duration such as 90s, 5m or 1h, got "${windowRaw}"`, cmd);
    windowMs = parsed;
  }
  const rule: GroupRule = { depth, globs, windowMs };
  const problem = groupRuleProblem(rule);
  if (problem !== null) usageError(`${problem} (--group-depth, --group-glob, --group-window)`, cmd);
  return rule;
}

import { describe, expect, it } from 'vitest';
import { compactDuration, roughDuration, secondsMinutesHours, slurmTimeLimit } from '../../src/format/durations.js';

describe('durations as text', () => {
  // Slurm's --time forms "hours:minutes:seconds" and "days-hours:minutes:seconds" (sbatch manual).
  it('writes a time limit as Slurm reads it, rounded up to whole minutes', () => {
    expect(slurmTimeLimit(0)).toBe('00:01:00');
    expect(slurmTimeLimit(59.2)).toBe('01:00:00');
    expect(slurmTimeLimit(125)).toBe('02:05:00');
    expect(slurmTimeLimit(1440 + 61)).toBe('1-01:01:00');
  });

  // Common practice for progress lines: minutes and seconds, then hours and minutes.
  it('writes elapsed and remaining times compactly, ? when unknown', () => {
    expect(compactDuration(NaN)).toBe('?');
    expect(compactDuration(41.6)).toBe('42s');
    expect(compactDuration(185)).toBe('3m05s');
    expect(compactDuration(2 * 3600 + 7 * 60 + 30)).toBe('2h07m');
  });

  it('writes a rough estimate in the largest fitting unit, two figures at most', () => {
    expect(roughDuration(0.4)).toBe('under a second');
    expect(roughDuration(3.04)).toBe('about 3 s');
    expect(roughDuration(90)).toBe('about 90 s');
    expect(roughDuration(150)).toBe('about 2.5 min');
    expect(roughDuration(3 * 86400)).toBe('about 3 days');
  });

  it('writes a live status duration in whole seconds or minutes, then tenths of hours', () => {
    expect(secondsMinutesHours(42.4)).toBe('42 s');
    expect(secondsMinutesHours(89)).toBe('89 s');
    expect(secondsMinutesHours(1000)).toBe('17 min');
    expect(secondsMinutesHours(9000)).toBe('2.5 h');
  });
});

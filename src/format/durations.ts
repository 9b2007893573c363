// Durations as text: a rough estimate for people, a compact clock for progress lines, whole
// units for a live status line, and the time limit a batch scheduler reads.

/** A rough duration for people: seconds to days, two significant figures at most. */
export function roughDuration(seconds: number): string {
  if (seconds < 1) return 'under a second';
  const round = (x: number) => (x < 10 ? x.toFixed(1).replace(/\.0$/, '') : String(Math.round(x)));
  if (seconds < 120) return `about ${round(seconds)} s`;
  if (seconds < 7200) return `about ${round(seconds / 60)} min`;
  if (seconds < 172800) return `about ${round(seconds / 3600)} h`;
  return `about ${round(seconds / 86400)} days`;
}

/** Elapsed or remaining time on a progress line: 42s, 3m05s, 2h07m; ? when unknown. */
export function compactDuration(seconds: number): string {
  if (!Number.isFinite(seconds)) return '?';
  const s = Math.round(seconds);
  if (s < 60) return `${s}s`;
  if (s < 3600) return `${Math.floor(s / 60)}m${String(s % 60).padStart(2, '0')}s`;
  return `${Math.floor(s / 3600)}h${String(Math.floor((s % 3600) / 60)).padStart(2, '0')}m`;
}

/** Seconds, minutes or hours with the unit spelled: 42 s, 17 min, 2.5 h. */
export function secondsMinutesHours(seconds: number): string {
  if (seconds < 90) return `${seconds.toFixed(0)} s`;
  if (seconds < 5400) return `${(seconds / 60).toFixed(0)} min`;
  return `${(seconds / 3600).toFixed(1)} h`;
}

/** A time limit in Slurm's form, HH:MM:00 or D-HH:MM:00, rounded up to whole minutes (at least one). */
export function slurmTimeLimit(minutes: number): string {
  const m = Math.max(1, Math.ceil(minutes));
  const days = Math.floor(m / 1440);
  const h = Math.floor((m % 1440) / 60);
  const mm = m % 60;
  const hms = `${String(h).padStart(2, '0')}:${String(mm).padStart(2, '0')}:00`;
  return days > 0 ? `${days}-${hms}` : hms;
}

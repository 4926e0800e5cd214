/**
 * How Driftbench speaks of a checkpoint's exposure, by process kind: the kind's name, a one-line
 * summary for column heads, the figures for the plan, the cautions before the work, and how each
 * kind of part tends to take it. Written for Driftbench, in its own words; common practice in the
 * trade, no source — the makers' instructions, local codes and licensed practice always come first.
 */
import type { Exposure, ProcessKind } from '../../shared/protocol/process';

export type { Exposure, ProcessKind };

export const PROCESS_LABELS: Record<ProcessKind, string> = {
  wash: 'Wash (ultrasonic or aqueous)',
  reflow: 'Reflow soldering',
  bake: 'Bake',
  'thermal-cycling': 'Thermal cycling',
  'conformal-coat': 'Conformal coating',
  vibration: 'Vibration or shock',
  other: 'Other process',
};

function plain(value: number): string {
  return Number(value.toPrecision(6)).toString();
}
function signed(value: number): string {
  return value > 0 ? `+${plain(value)}` : plain(value).replace('-', '−');
}

/** One line for a column head: "40 kHz · 45 °C · 3 min/side", "Reflow · peak 245 °C · 1 pass". */
export function exposureSummary(exposure: Exposure | null | undefined): string {
  if (!exposure) return 'No exposure';
  const parts: string[] = [];
  switch (exposure.kind) {
    case 'wash':
      if (exposure.bathKHz === undefined) parts.push(exposure.process ?? 'Wash');
      if (exposure.bathKHz !== undefined) parts.push(`${plain(exposure.bathKHz)} kHz`);
      if (exposure.temperatureC !== undefined) parts.push(`${plain(exposure.temperatureC)} °C`);
      if (exposure.minutesPerSide) parts.push(`${plain(exposure.minutesPerSide)} min/side`);
      break;
    case 'reflow':
      parts.push('Reflow', `peak ${plain(exposure.peakC)} °C`);
      if (exposure.secondsAboveLiquidus !== undefined)
        parts.push(`${plain(exposure.secondsAboveLiquidus)} s above liquidus`);
      parts.push(`${exposure.passes} pass${exposure.passes === 1 ? '' : 'es'}`);
      break;
    case 'bake':
      parts.push('Bake', `${plain(exposure.temperatureC)} °C`, `${plain(exposure.hours)} h`);
      break;
    case 'thermal-cycling':
      parts.push(
        `Cycling ${signed(exposure.lowC)} … ${signed(exposure.highC)} °C`,
        `${plain(exposure.dwellMinutes)} min dwell`,
        `${exposure.cycles} cycle${exposure.cycles === 1 ? '' : 's'}`,
      );
      break;
    case 'conformal-coat':
      parts.push(`Coat: ${exposure.material}`);
      if (exposure.cure) parts.push(`cure ${exposure.cure}`);
      break;
    case 'vibration':
      parts.push(
        `${exposure.mode === 'shock' ? 'Shock' : 'Vibration'} ${plain(exposure.levelG)} ${exposure.mode === 'shock' ? 'g' : 'g rms'}`,
        `${plain(exposure.duration)} ${exposure.durationUnit}`,
      );
      break;
    case 'other':
      parts.push(exposure.description);
      break;
  }
  return parts.join(' · ');
}

function figure(value: number | undefined, unit: string): string {
  return value === undefined ? '—' : `${plain(value)} ${unit}`;
}

/** The exposure's own figures as [label, value] rows for the plan (only the kind's fields). */
export function exposureRows(e: Exposure): Array<[string, string]> {
  const rows: Array<[string, string]> = [['Process', e.process ?? PROCESS_LABELS[e.kind]]];
  switch (e.kind) {
    case 'wash':
      rows.push(
        ['Bath', figure(e.bathKHz, 'kHz')],
        ['Temperature', figure(e.temperatureC, '°C')],
        ['Solvent', e.solvent ?? '—'],
        ['Per side', figure(e.minutesPerSide, 'min')],
        ['Cumulative', figure(e.cumulativeMinutes, 'min')],
      );
      break;
    case 'reflow':
      rows.push(
        ['Peak', figure(e.peakC, '°C')],
        ['Above liquidus', figure(e.secondsAboveLiquidus, 's')],
        ['Passes', String(e.passes)],
      );
      break;
    case 'bake':
      rows.push(['Temperature', figure(e.temperatureC, '°C')], ['Duration', figure(e.hours, 'h')]);
      break;
    case 'thermal-cycling':
      rows.push(
        ['Low', `${signed(e.lowC)} °C`],
        ['High', `${signed(e.highC)} °C`],
        ['Dwell', figure(e.dwellMinutes, 'min')],
        ['Cycles', String(e.cycles)],
      );
      break;
    case 'conformal-coat':
      rows.push(['Material', e.material], ['Cure', e.cure ?? '—']);
      break;
    case 'vibration':
      rows.push(
        ['Kind', e.mode === 'shock' ? 'Shock' : 'Vibration'],
        ['Level', `${plain(e.levelG)} ${e.mode === 'shock' ? 'g peak' : 'g rms'}`],
        ['Duration', `${plain(e.duration)} ${e.durationUnit}`],
      );
      break;
    case 'other':
      rows.push(['What', e.description]);
      break;
  }
  return rows;
}

export interface Caution {
  title: string;
  text: string;
}

const ESD: Caution = {
  title: 'ESD',
  text: 'handle boards and parts at a grounded bench, wearing a wrist strap.',
};

/** The usual reminders before each kind of process: calm, short, never a procedure. */
export const CAUTIONS: Record<ProcessKind, Caution[]> = {
  wash: [
    {
      title: 'Flammable solvents',
      text: 'keep flammable solvents out of ultrasonic baths unless the bath is made and rated for them.',
    },
    {
      title: 'Ventilation',
      text: 'solvent vapour builds up quickly: work with the extraction on and no ignition sources nearby.',
    },
    {
      title: 'Hot liquid',
      text: 'a heated bath scalds; let it cool before reaching in or draining it.',
    },
    {
      title: 'Never run a bath dry',
      text: 'fill to the marked level before switching the transducers on.',
    },
    { title: 'Hearing', text: 'wear hearing protection near a running bath, and keep its lid on.' },
    {
      title: 'Dry before power',
      text: 'boards must be fully dry, under parts too, before any power is applied.',
    },
    {
      title: 'Mains instruments',
      text: 'keep liquids and wet boards away from mains-powered instruments.',
    },
    ESD,
  ],
  reflow: [
    {
      title: 'Hot surfaces',
      text: 'boards, carriers and the oven’s exit stay hot well after the profile ends; lift them with tongs or heat-resistant gloves.',
    },
    {
      title: 'Fumes',
      text: 'flux gives off fumes while it reflows: keep the oven’s extraction running and do not lean over the exit.',
    },
    {
      title: 'Profile limits',
      text: 'stay inside the lowest peak temperature and pass count that any part on the board is rated for.',
    },
    {
      title: 'Moisture-sensitive parts',
      text: 'parts that have taken up moisture may need a bake before reflow, as their handling class says.',
    },
    ESD,
  ],
  bake: [
    {
      title: 'Hot oven',
      text: 'walls, racks and trays are hot; use heat-resistant gloves and let boards cool before handling.',
    },
    {
      title: 'Carriers and trays',
      text: 'tape, reels and plastic trays often tolerate less heat than the parts; check them before loading.',
    },
    {
      title: 'Ventilation',
      text: 'a first bake drives out moisture and flux residue; keep the oven vented.',
    },
    ESD,
  ],
  'thermal-cycling': [
    {
      title: 'Chamber',
      text: 'open the chamber only at a safe temperature; cold shelves and fittings burn skin as readily as hot ones.',
    },
    {
      title: 'Condensation',
      text: 'boards taken out cold gather moisture: let them come to room temperature in dry air before power or a capture.',
    },
    {
      title: 'Coolant',
      text: 'a chamber cooled by liquid nitrogen or CO₂ needs ventilation and an oxygen monitor in a closed room.',
    },
    {
      title: 'Cables through the port',
      text: 'seal the cable port and keep leads clear of the door seal.',
    },
    ESD,
  ],
  'conformal-coat': [
    {
      title: 'Solvent vapour and flammability',
      text: 'coatings and thinners are often flammable: spray or dip under extraction, away from ignition sources.',
    },
    { title: 'Skin and eyes', text: 'wear gloves and eye protection; wash off splashes at once.' },
    {
      title: 'Curing',
      text: 'UV curing lamps harm eyes and skin, and heat cures need the same care as a bake.',
    },
    { title: 'Masking', text: 'mask connectors, test points and open-port parts before coating.' },
    ESD,
  ],
  vibration: [
    {
      title: 'Fixture',
      text: 'bolt the board and fixture down as the table’s maker specifies before starting; a loose fixture is a projectile.',
    },
    { title: 'Keep clear', text: 'stay clear of the moving table and its cables while it runs.' },
    { title: 'Hearing', text: 'wear hearing protection near a running shaker or drop tester.' },
    {
      title: 'Stop before handling',
      text: 'stop the table or tester and wait for it to stand still before touching the board.',
    },
    ESD,
  ],
  other: [
    {
      title: 'The process’s own instructions',
      text: 'follow the equipment’s and the materials’ instructions for this step.',
    },
    ESD,
  ],
};

/**
 * How each kind of part tends to take a process, per process kind: `default` for a kind of part
 * with no note of its own. Common practice in the trade, no source; not a rating of any part.
 */
export const SUSCEPTIBILITY: Record<ProcessKind, Record<string, string> & { default: string }> = {
  wash: {
    crystal:
      'MHz crystals are small and stiff; they usually come through ultrasonic cleaning unchanged.',
    oscillator: 'Oscillator modules usually come through ultrasonic cleaning unchanged.',
    tcxo: 'Like other MHz oscillators, TCXOs usually come through ultrasonic cleaning unchanged.',
    'tuning-fork':
      'A 32.768 kHz tuning fork resonates much nearer a bath’s frequency: wash with caution.',
    accelerometer:
      'MEMS parts with open ports are harmed by liquid unless sealed; check the part’s port and seal.',
    relay: 'Relays and switches need their maker’s approval before ultrasonic cleaning.',
    capacitor: 'Check the maker’s cleaning guidance for the dielectric and the case.',
    default: 'Check the maker’s cleaning guidance for this part.',
  },
  reflow: {
    crystal:
      'A crystal may shift slightly with reflow heat and settle over days; its maker states the peak and the number of passes.',
    oscillator: 'Oscillator modules carry a maximum reflow profile and pass count; stay within it.',
    tcxo: 'A TCXO may take hours to days to settle after reflow: let it rest before the capture.',
    'tuning-fork':
      'Tuning forks in plastic packages can shift after reflow; let them settle before the capture.',
    accelerometer:
      'MEMS accelerometers can show an offset shift from board stress after reflow; let them rest before the capture.',
    capacitor: 'Ceramic capacitors can crack from a steep ramp; follow the maker’s ramp rates.',
    relay:
      'Many relays and switches are not rated for reflow; check before the board goes through.',
    default: 'Check the part’s rated reflow profile and pass count.',
  },
  bake: {
    crystal:
      'A moderate bake seldom moves a crystal beyond its ageing; a long one may speed early ageing.',
    'tuning-fork':
      'Tuning forks age faster while hot; compare after they are back at room temperature.',
    accelerometer: 'A bake may relieve board stress and move a MEMS part’s offset slightly.',
    capacitor: 'Electrolytic capacitors dry out with long bakes; check their temperature rating.',
    default: 'Check the part’s storage temperature rating before baking.',
  },
  'thermal-cycling': {
    crystal:
      'Cycling can show a crystal’s hysteresis: capture after it has rested at room temperature.',
    tcxo: 'A TCXO’s compensation may retrace imperfectly after cycling; rest it before the capture.',
    accelerometer:
      'Cycling stresses solder joints and the MEMS die attach; offset shifts often show first.',
    capacitor: 'Large ceramic capacitors are prone to cracks from cycling.',
    default: 'Check the part’s operating and storage range against the cycle’s limits.',
  },
  'conformal-coat': {
    accelerometer: 'Coating must not enter a MEMS part’s open port: mask it.',
    'tuning-fork':
      'Coating over a tuning fork’s package can load it slightly; mask it where its maker says so.',
    relay: 'Keep coating out of relays and switches; mask them.',
    default: 'Check whether the part needs masking before the coat.',
  },
  vibration: {
    crystal: 'Crystals can shift after shock, and large packages more than small ones.',
    oscillator: 'Oscillator modules have a rated shock and vibration level; stay within it.',
    'tuning-fork': 'Tuning forks are sensitive to shock; a drop can move them by ppm.',
    accelerometer:
      'Shock beyond the part’s rating can move its offset or sensitivity; keep inside its rated g.',
    relay: 'Relay contacts can chatter or weld under vibration; check their rating.',
    default: 'Check the part’s rated shock and vibration levels.',
  },
  other: {
    default: 'Check the maker’s guidance for this part and this process.',
  },
};

/** The note for a kind of part under a process kind. */
export function susceptibility(process: ProcessKind, dutKind: string): string {
  const notes = SUSCEPTIBILITY[process];
  return notes[dutKind] ?? notes.default;
}

/** The process kinds a plan's checkpoints use, in the order they first appear. */
export function plannedKinds(
  checkpoints: ReadonlyArray<{ exposure: Exposure | null }>,
): ProcessKind[] {
  const kinds: ProcessKind[] = [];
  for (const c of checkpoints)
    if (c.exposure && !kinds.includes(c.exposure.kind)) kinds.push(c.exposure.kind);
  return kinds;
}

/**
 * The demo lab's story (issue "a demo lab with a story"): finished captures for every DUT at every
 * checkpoint of the Kestrel Bay wash study, made from the simulators' noise models and stored
 * through the same services the bench uses — createCapture, ingestReadings, finishCapture — so
 * every summary, seal, tile and audit event is the real thing. Most parts stay within; the tuning
 * fork exceeds after the over-exposure; the 16 MHz crystal's after-bake capture was short and
 * disturbed, so its cell is inconclusive, and a re-capture of it is on air for anyone to watch; the
 * accelerometer has tilt checks; a second, small reflow study is already approved with its report.
 *
 * Idempotent: it runs only while the wash study has no capture. All numbers are invented.
 */
import type pg from 'pg';
import type { Logger } from 'pino';
import { Capture, Checkpoint, Dut, Instrument, Reference, Study, User } from '../models/index.js';
import { createCapture } from '../services/captures.js';
import { ingestReadings } from '../services/ingest.js';
import { finishCapture } from '../services/finish.js';
import { recordTiltCheck } from '../services/tiltChecks.js';
import { addCheckpoint, addDut, createStudy } from '../services/studies.js';
import { approveStudy, submitStudy } from '../services/workflow.js';
import type { AuthUser } from '../services/auth.js';
import type { LiveHub } from '../ws/live.js';
import { SimCounter } from '../../simulators/counter.js';
import { ManualClock } from '../../simulators/clock.js';
import { createRng, subSeed } from '../../simulators/noise.js';
import {
  ACCEL_PRESET,
  presetCounter,
  presetSeed,
  type CheckpointIndex,
  type CounterPresetName,
} from '../../simulators/presets.js';
import { DEMO_PASSWORD } from './seed.js';
import type { StaticOrientation } from '../../shared/analysis/tiltCheck.js';

export const DEMO_STUDY_TITLE = 'Aqueous ultrasonic wash — sensor-hub board rev C';
export const DEMO_APPROVED_TITLE = 'Reflow profile B — 16 MHz crystal on the carrier board';
/** Readings per demo capture (10 minutes at a 1 s gate). */
const READINGS = 600;
/** The bench's ambient at each checkpoint, °C (invented; the lab is air-conditioned to 23 ± 0.5 °C). */
const AMBIENT: readonly number[] = [23.0, 23.3, 22.8, 23.1];
const PARTS: ReadonlyArray<[CounterPresetName, string]> = [
  ['xtal-16m', 'Y1'],
  ['osc-25m', 'X2'],
  ['tf-32k', 'Y3'],
  ['tcxo-12m8', 'U4'],
];

interface Cast {
  technician: AuthUser;
  engineer: AuthUser;
  lead: AuthUser;
}

function asAuth(u: User): AuthUser {
  return { id: u.id, email: u.email, name: u.name, role: u.role, mustChangePassword: false };
}

async function cast(): Promise<Cast | null> {
  const users = await User.findAll({ where: { active: true } });
  const pick = (role: string) => users.find((u) => u.role === role);
  const technician = pick('technician');
  const engineer = pick('engineer');
  const lead = pick('lead');
  if (!technician || !engineer || !lead) return null;
  return { technician: asAuth(technician), engineer: asAuth(engineer), lead: asAuth(lead) };
}

/** Counter readings of a preset at a checkpoint: frequency in Hz as the simulated counter displays it. */
export function counterReadings(
  preset: CounterPresetName,
  checkpoint: CheckpointIndex,
  n: number,
  opts: { noiseScale?: number; seedOffset?: number } = {},
): number[] {
  const config = presetCounter(preset, checkpoint);
  const scale = opts.noiseScale ?? 1;
  const noise = Object.fromEntries(
    Object.entries(config.oscillator.noise).map(([k, v]) => [k, (v ?? 0) * scale]),
  );
  const sim = new SimCounter(
    {
      ...config,
      oscillator: { ...config.oscillator, noise },
      garble: 0,
      seed: config.seed + (opts.seedOffset ?? 0),
    },
    new ManualClock(),
  );
  return Array.from({ length: n }, () => sim.nextReading().value);
}

/** Z-axis readings of the demo accelerometer (mg) in one orientation: gravity, the part's bias and scale error, noise. */
function accelReadings(
  checkpoint: CheckpointIndex,
  orientation: StaticOrientation,
  n: number,
): number[] {
  const p = ACCEL_PRESET;
  const rng = createRng(subSeed(presetSeed('accel', checkpoint), orientation.length));
  const g = orientation === 'flat' ? 1000 : orientation === 'inverted' ? -1000 : 0;
  const z = g * (1 + p.sensErrPct.z / 100) + p.biasMg.z + p.biasShiftMg[checkpoint].z;
  return Array.from({ length: n }, () => z + p.noiseMg * rng.gauss());
}

async function capture(
  pool: pg.Pool,
  hub: LiveHub,
  who: AuthUser,
  create: Parameters<typeof createCapture>[0],
  values: number[],
  opts: { finish?: boolean } = {},
): Promise<number> {
  const c = await createCapture({ ...create, simulated: true }, who);
  const gate = create.gateTime;
  for (let start = 0; start < values.length; start += 2000) {
    const readings = values
      .slice(start, start + 2000)
      .map((value, i) => ({ seq: start + i, t: (start + i) * gate, value }));
    await ingestReadings(pool, hub, who, c.id, { readings });
  }
  if (opts.finish ?? true) await finishCapture(pool, hub, who, c.id);
  return c.id;
}

/** Seeds the story once; returns the id of the capture left on air (or null when nothing was seeded). */
export async function seedDemoStory(
  pool: pg.Pool,
  hub: LiveHub,
  log?: Logger,
): Promise<number | null> {
  const study = await Study.findOne({ where: { title: DEMO_STUDY_TITLE } });
  if (!study) return null;
  const duts = await Dut.findAll({ where: { studyId: study.id }, order: [['id', 'ASC']] });
  if ((await Capture.count({ where: { dutId: duts.map((d) => d.id) } })) > 0) return null;
  const people = await cast();
  if (!people) return null;
  const started = Date.now();
  const checkpoints = await Checkpoint.findAll({
    where: { studyId: study.id },
    order: [
      ['position', 'ASC'],
      ['id', 'ASC'],
    ],
  });
  const counter = await Instrument.findOne({ where: { kind: 'counter' }, order: [['id', 'ASC']] });
  const bridge = await Instrument.findOne({
    where: { kind: 'spi-bridge' },
    order: [['id', 'ASC']],
  });
  const reference = await Reference.findOne({ order: [['id', 'ASC']] });
  const { technician } = people;
  let onAir: number | null = null;

  for (const [preset, position] of PARTS) {
    const dut = duts.find((d) => d.position === position);
    if (!dut) continue;
    for (const cp of [0, 1, 2, 3] as CheckpointIndex[]) {
      const checkpoint = checkpoints[cp];
      if (!checkpoint) continue;
      const base = {
        dutId: dut.id,
        checkpointId: checkpoint.id,
        quantity: 'frequency' as const,
        unit: 'Hz',
        gateTime: 1,
        instrumentId: counter?.id,
        referenceId: reference?.id,
        ambientC: AMBIENT[cp],
      };
      if (preset === 'xtal-16m' && cp === 3) {
        // A short capture while the bench was being moved: 20 readings with the noise raised a
        // thousand-fold. Its U spans the limit, so the cell is honestly inconclusive.
        await capture(
          pool,
          hub,
          technician,
          {
            ...base,
            notes:
              'Short capture; the bench was disturbed (door slammed, cable moved). Re-capture planned.',
          },
          counterReadings(preset, cp, 20, { noiseScale: 2000 }),
        );
        // The re-capture is on air: started now, fed by the demo feeder while the server runs.
        onAir = await capture(
          pool,
          hub,
          technician,
          {
            ...base,
            notes:
              'Re-capture of the disturbed after-bake reading (demo: fed live by the simulator).',
          },
          counterReadings(preset, cp, 30, { seedOffset: 7 }),
          { finish: false },
        );
        continue;
      }
      await capture(pool, hub, technician, base, counterReadings(preset, cp, READINGS));
    }
  }

  // The accelerometer: a tilt check (on edge, inverted, then flat) at the baseline and after the
  // bake, and a flat capture at every checkpoint; flat is finished last, so each cell shows it.
  const accel = duts.find((d) => d.kind === 'accelerometer');
  if (accel) {
    for (const cp of [0, 1, 2, 3] as CheckpointIndex[]) {
      const checkpoint = checkpoints[cp];
      if (!checkpoint) continue;
      const orientations =
        cp === 0 || cp === 3 ? (['on-edge', 'inverted', 'flat'] as const) : (['flat'] as const);
      const ids: Partial<Record<(typeof orientations)[number], number>> = {};
      for (const orientation of orientations) {
        ids[orientation] = await capture(
          pool,
          hub,
          technician,
          {
            dutId: accel.id,
            checkpointId: checkpoint.id,
            quantity: 'acceleration',
            unit: 'mg',
            gateTime: 0.1,
            instrumentId: bridge?.id,
            ambientC: AMBIENT[cp],
            orientation,
            ...(orientation === 'flat' ? {} : { nominal: undefined }),
            tags: cp === 0 || cp === 3 ? ['tilt check'] : [],
          },
          accelReadings(cp, orientation, 200),
        );
      }
      // The tilt check's result, stored as the bench stores it: the matrix compares it across checkpoints.
      if (ids.flat && ids.inverted) {
        await recordTiltCheck(
          pool,
          accel.id,
          {
            checkpointId: checkpoint.id,
            axis: 'z',
            flatCaptureId: ids.flat,
            invertedCaptureId: ids.inverted,
            onEdgeCaptureId: ids['on-edge'] ?? null,
          },
          technician.id,
        );
      }
    }
  }

  await seedApprovedStudy(pool, hub, people, counter?.id, reference?.id);
  log?.info({ ms: Date.now() - started }, 'demo story seeded');
  return onAir;
}

/** A small reflow study, captured, submitted by the engineer and approved by the lead: a report to read. */
async function seedApprovedStudy(
  pool: pg.Pool,
  hub: LiveHub,
  people: Cast,
  counterId?: number,
  referenceId?: number,
): Promise<void> {
  const created = await createStudy(
    {
      title: DEMO_APPROVED_TITLE,
      process: 'Reflow soldering, profile B (one pass)',
      description:
        'Check that one pass of reflow profile B leaves the 16 MHz crystal on the carrier board within ±1 ppm.',
    },
    people.engineer.id,
  );
  const studyId = created.id;
  await Study.update({ allowSimulated: true }, { where: { id: studyId } });
  const baseline = await addCheckpoint(studyId, { name: 'Baseline' }, people.engineer.id);
  const after = await addCheckpoint(
    studyId,
    {
      name: 'After reflow (1 pass)',
      exposure: {
        kind: 'reflow',
        process: 'Reflow, profile B',
        peakC: 245,
        secondsAboveLiquidus: 60,
        passes: 1,
      },
    },
    people.engineer.id,
  );
  const dut = await addDut(
    studyId,
    {
      label: 'Y1 16 MHz crystal (carrier)',
      kind: 'crystal',
      nominal: 16_000_000,
      unit: 'Hz',
      limit: 1,
      limitUnit: 'ppm',
      position: 'Y1',
      serial: 'CB-0007-Y1',
    },
    people.engineer.id,
  );
  for (const [cp, checkpoint] of [
    [0, baseline],
    [1, after],
  ] as const) {
    await capture(
      pool,
      hub,
      people.technician,
      {
        dutId: dut.id,
        checkpointId: checkpoint.id,
        quantity: 'frequency',
        unit: 'Hz',
        gateTime: 1,
        instrumentId: counterId,
        referenceId,
        ambientC: AMBIENT[cp],
      },
      counterReadings('xtal-16m', cp as CheckpointIndex, READINGS, { seedOffset: 101 }),
    );
  }
  await submitStudy(
    studyId,
    people.engineer,
    'Both captures finished; the crystal moved by a few ppb.',
  );
  await approveStudy(
    pool,
    studyId,
    people.lead,
    DEMO_PASSWORD,
    'Within ±1 ppm with margin; approved.',
  );
}

/**
 * Feeds the demo's on-air capture one simulated reading per gate while the server runs, so anyone
 * can watch a capture live. Resumes after a restart from the capture's highest stored seq. Returns
 * a stop function.
 */
export function startDemoFeeder(
  pool: pg.Pool,
  hub: LiveHub,
  captureId: number,
  log?: Logger,
): () => void {
  let stopped = false;
  let timer: NodeJS.Timeout | undefined;
  const tick = async () => {
    if (stopped) return;
    try {
      const c = await Capture.findByPk(captureId);
      if (!c || (c.state !== 'open' && c.state !== 'stalled')) return; // finished or aborted by someone: the feeder stops
      const operator = c.operatorId ? await User.findByPk(c.operatorId) : null;
      if (!operator) return;
      const seq = c.highestSeq + 1;
      const [value] = counterReadings('xtal-16m', 3, 1, { seedOffset: 1000 + seq });
      await ingestReadings(pool, hub, asAuth(operator), captureId, {
        readings: [{ seq, t: seq * c.gateTime, value }],
      });
    } catch (err) {
      log?.warn({ err }, 'demo feeder: a reading was not stored');
    }
    if (!stopped) timer = setTimeout(tick, 1000);
  };
  timer = setTimeout(tick, 1000);
  return () => {
    stopped = true;
    if (timer) clearTimeout(timer);
  };
}

/** The demo's on-air capture, if one is still open (after a restart). */
export async function findOnAir(): Promise<number | null> {
  const study = await Study.findOne({ where: { title: DEMO_STUDY_TITLE } });
  if (!study) return null;
  const duts = await Dut.findAll({ where: { studyId: study.id }, attributes: ['id'] });
  const open = await Capture.findOne({
    where: { dutId: duts.map((d) => d.id), state: ['open', 'stalled'] },
    order: [['id', 'DESC']],
  });
  return open?.id ?? null;
}

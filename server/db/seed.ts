import {
  User,
  Instrument,
  Reference,
  Study,
  Checkpoint,
  Dut,
  CalibrationRecord,
} from '../models/index.js';
import { hashPassword } from '../services/auth.js';
import type { Sequelize } from 'sequelize';
import type { Role } from '../../shared/protocol/roles.js';

/** The password of every demo account (created only by the demo seed). */
export const DEMO_PASSWORD = 'driftbench-demo';
export const DEMO_DOMAIN = 'kestrelbay.example';

export const DEMO_USERS: Array<{ role: Role; name: string }> = [
  { role: 'admin', name: 'Ada Admin' },
  { role: 'lead', name: 'Lena Lead' },
  { role: 'engineer', name: 'Emil Engineer' },
  { role: 'technician', name: 'Tomas Technician' },
  { role: 'viewer', name: 'Vera Viewer' },
];

function isoDate(daysFromNow: number): string {
  return new Date(Date.now() + daysFromNow * 86_400_000).toISOString().slice(0, 10);
}

/** True when the database holds no users yet. */
export async function isEmpty(): Promise<boolean> {
  return (await User.count()) === 0;
}

/**
 * Seeds the invented demo lab: Kestrel Bay Assembly qualifies an aqueous ultrasonic wash for its
 * sensor-hub board rev C. One user per role, instruments, a reference, the study with its
 * checkpoints and DUTs.
 */
export async function seedDemo(sequelize: Sequelize): Promise<void> {
  const hash = await hashPassword(DEMO_PASSWORD);
  await sequelize.transaction(async (transaction) => {
    const users = await User.bulkCreate(
      DEMO_USERS.map((u) => ({
        email: `${u.role}@${DEMO_DOMAIN}`,
        name: u.name,
        role: u.role,
        passwordHash: hash,
      })),
      { transaction, returning: true },
    );
    const engineer = users.find((u) => u.role === 'engineer')!;

    const instrumentsCreated = await Instrument.bulkCreate(
      [
        {
          name: 'Counter C-1',
          kind: 'counter',
          maker: 'Driftbench Labs (simulated)',
          model: 'SIM-CNT-1',
          serial: 'KB-CNT-0001',
          calibrationDue: isoDate(200),
          notes:
            'Reciprocal counter, 100 ps single-shot resolution; timebase locked to the GPS 10 MHz.',
          counterType: 'reciprocal',
          counterResolution: 100e-12,
        },
        {
          name: 'SPI bridge B-1',
          kind: 'spi-bridge',
          maker: 'Driftbench Labs (simulated)',
          model: 'SIM-SPI-1',
          serial: 'KB-SPI-0001',
          calibrationDue: null,
          notes: 'Hex-line SPI bridge for the accelerometer.',
        },
        {
          name: 'GPS 10 MHz reference',
          kind: 'reference',
          maker: 'Driftbench Labs (simulated)',
          model: 'SIM-GPSDO-1',
          serial: 'KB-REF-0001',
          calibrationDue: isoDate(20),
          notes: 'Settled for more than 24 h before use.',
        },
        {
          name: 'Bench thermometer T-1',
          kind: 'thermometer',
          maker: 'Driftbench Labs (simulated)',
          model: 'SIM-T-1',
          serial: 'KB-TMP-0001',
          calibrationDue: isoDate(-5),
          notes: 'Ambient temperature beside the board.',
        },
      ],
      { transaction, returning: true },
    );
    const [counter, , , thermometer] = instrumentsCreated;
    const reference = await Reference.create(
      {
        name: 'GPS-disciplined 10 MHz',
        nominalHz: 10_000_000,
        fractionalOffset: 2e-12,
        standardUncertainty: 1e-11,
        verifiedBy: 'Compared against a second disciplined oscillator over 24 h',
        verifiedAt: isoDate(-10),
        instrumentId: instrumentsCreated[2].id,
        // Disciplined to satellite time: no ageing of its own beyond a small allowance (common practice, no source).
        kind: 'gnss-disciplined',
        ageingPerDay: 0,
        ageingUPerDay: 1e-13,
        calibrationDue: isoDate(355),
        // The lab's reference: the bench offers it first.
        labDefault: true,
      },
      { transaction },
    );
    // Calibration history: the counter's and the thermometer's last certificates, the reference's last comparison.
    await CalibrationRecord.bulkCreate(
      [
        {
          instrumentId: counter.id,
          calibratedOn: isoDate(-165),
          dueOn: isoDate(200),
          certificate: 'DBX-C-2291',
          issuedBy: 'Driftbench demo calibration lab',
          uncertainty: '±2 × 10⁻¹¹ (k = 2) on 10 MHz',
          recordedBy: users[0].id,
        },
        {
          instrumentId: thermometer.id,
          calibratedOn: isoDate(-370),
          dueOn: isoDate(-5),
          certificate: 'DBX-T-0457',
          issuedBy: 'Driftbench demo calibration lab',
          uncertainty: '±0.05 °C (k = 2), 15–35 °C',
          recordedBy: users[0].id,
        },
        {
          referenceId: reference.id,
          calibratedOn: isoDate(-10),
          dueOn: isoDate(355),
          certificate: 'DBX-R-0102',
          issuedBy: 'Compared against a second disciplined oscillator over 24 h',
          fractionalOffset: 2e-12,
          standardUncertainty: 1e-11,
          recordedBy: users[0].id,
        },
      ],
      { transaction },
    );

    const study = await Study.create(
      {
        title: 'Aqueous ultrasonic wash — sensor-hub board rev C',
        process: 'Aqueous ultrasonic cleaning, 40 kHz bath',
        description:
          'Qualify the new aqueous ultrasonic wash for the sensor-hub board rev C: every DUT is captured at baseline, after a normal wash, after an over-exposure and after a bake.',
        status: 'running',
        createdBy: engineer.id,
        // The demo lab's instruments are simulators: its study accepts simulated captures.
        allowSimulated: true,
      },
      { transaction },
    );
    await Checkpoint.bulkCreate(
      [
        { studyId: study.id, name: 'Baseline', position: 0, exposure: null },
        {
          studyId: study.id,
          name: 'After wash (3 min/side)',
          position: 1,
          exposure: {
            kind: 'wash',
            process: 'Aqueous ultrasonic wash',
            bathKHz: 40,
            temperatureC: 45,
            solvent: 'Aqueous detergent, 5 %',
            minutesPerSide: 3,
            cumulativeMinutes: 6,
          },
        },
        {
          studyId: study.id,
          name: 'After over-exposure (30 min/side)',
          position: 2,
          exposure: {
            kind: 'wash',
            process: 'Aqueous ultrasonic wash',
            bathKHz: 40,
            temperatureC: 45,
            solvent: 'Aqueous detergent, 5 %',
            minutesPerSide: 30,
            cumulativeMinutes: 66,
          },
        },
        {
          studyId: study.id,
          name: 'After bake (4 h)',
          position: 3,
          exposure: {
            kind: 'bake',
            process: 'Bake-out',
            temperatureC: 85,
            hours: 4,
            notes: 'To drive out moisture after the washes',
          },
        },
      ],
      { transaction },
    );
    await Dut.bulkCreate(
      [
        {
          studyId: study.id,
          label: 'Y1 16 MHz crystal',
          kind: 'crystal',
          nominal: 16_000_000,
          unit: 'Hz',
          limitValue: 1,
          limitUnit: 'ppm',
          position: 'Y1',
          serial: 'RC-0001-Y1',
        },
        {
          studyId: study.id,
          label: 'X2 25 MHz oscillator',
          kind: 'oscillator',
          nominal: 25_000_000,
          unit: 'Hz',
          limitValue: 1,
          limitUnit: 'ppm',
          position: 'X2',
          serial: 'RC-0001-X2',
        },
        {
          studyId: study.id,
          label: 'Y3 32.768 kHz tuning fork',
          kind: 'tuning-fork',
          nominal: 32_768,
          unit: 'Hz',
          limitValue: 1,
          limitUnit: 'ppm',
          position: 'Y3',
          serial: 'RC-0001-Y3',
        },
        {
          studyId: study.id,
          label: 'U4 12.8 MHz TCXO',
          kind: 'tcxo',
          nominal: 12_800_000,
          unit: 'Hz',
          limitValue: 1,
          limitUnit: 'ppm',
          position: 'U4',
          serial: 'RC-0001-U4',
        },
        {
          studyId: study.id,
          label: 'U5 3-axis accelerometer',
          kind: 'accelerometer',
          nominal: 1000,
          unit: 'mg',
          limitValue: 20,
          limitUnit: 'mg',
          quantityLimits: { sensitivity: { limit: 1 } },
          position: 'U5',
          serial: 'RC-0001-U5',
        },
      ],
      { transaction },
    );
  });
}

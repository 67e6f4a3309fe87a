import type { Transaction } from 'kysely';
import { entryCreate, type EntryFields, type EntryStatus, traceUpload } from '../../schemas/entries';
import { simulate } from '../../signature/simulate';
import type { DeviceModel, TestConditions } from '../../signature/types';
import type { Database } from '../db/connect';
import { insertEntry, insertRevision, setEntryStatus, snapshotOf } from '../entries/queries';
import { recordEntryChange } from '../entries/changes';
import { insertReviewEvent, type NewReviewEvent } from '../entries/review-history';
import { insertTrace, processCapture, processSimulation } from '../traces/service';

/**
 * Demo entries of the invented Fernhollow depot (motor drives and bench supplies). Every board,
 * part number, fault and reading here is made up for the demo. The fault curves are produced by
 * the engine's simulator with bench-like noise added, written out as the CSV a tester would
 * export, and stored through the same path as an upload; the known-good curves are simulated.
 */

const D_SIGNAL: DeviceModel = { kind: 'diode', is: 2.5e-9, n: 1.75, rs: 0.6 };
const D_RECT: DeviceModel = { kind: 'diode', is: 14e-9, n: 1.98, rs: 0.03 };
const zener = (bv: number): DeviceModel => ({ kind: 'diode', is: 1e-12, n: 1.1, rs: 2, bv, ibv: 1e-3 });
const R = (ohms: number): DeviceModel => ({ kind: 'resistor', ohms });
const C = (farads: number): DeviceModel => ({ kind: 'capacitor', farads });
const par = (...parts: DeviceModel[]): DeviceModel => ({ kind: 'parallel', parts });
const ser = (...parts: DeviceModel[]): DeviceModel => ({ kind: 'series', parts });
const L = (henries: number, ohms: number) => ser({ kind: 'inductor', henries }, R(ohms));
const OPEN: DeviceModel = { kind: 'open' };
const NEAR_SHORT = R(0.05);
/** An IC input with its two protection diodes (to the rails, seen from the pin against ground). */
const IC_PIN = par(D_SIGNAL, { ...D_SIGNAL, reversed: true } as DeviceModel);

const LOW: TestConditions = { sourcePeakV: 2, sourceResistanceOhm: 100, frequencyHz: 60 };
const MID: TestConditions = { sourcePeakV: 10, sourceResistanceOhm: 1000, frequencyHz: 60 };
const HIGH_R: TestConditions = { sourcePeakV: 10, sourceResistanceOhm: 10_000, frequencyHz: 60 };
const HF: TestConditions = { sourcePeakV: 10, sourceResistanceOhm: 1000, frequencyHz: 1000 };
const HV: TestConditions = { sourcePeakV: 20, sourceResistanceOhm: 10_000, frequencyHz: 60 };

const MD = 'MD-440 motor drive, rev C';
const PS = 'PS-12 bench supply, rev B';
const GD = 'GD-7 gate-driver board, rev A';
const CT = 'CTL-3 controller, rev D';

type Writer = 'admin' | 'author' | 'contributor';

interface DemoEntry {
	fields: Partial<EntryFields> & Pick<EntryFields, 'title' | 'componentKind' | 'symptom'>;
	conditions: TestConditions;
	fault: DeviceModel;
	good?: DeviceModel;
	status?: EntryStatus;
	writer?: Writer;
	reviewComment?: string;
}

const ENTRIES: DemoEntry[] = [
	{
		fields: { title: 'Gate resistor R27 open after a phase-leg failure', componentKind: 'resistor', partNumber: 'RC0805-22R', package: '0805', assembly: MD, testPoint: 'R27 pin 1 ↔ R27 pin 2', symptom: 'Flat line where a steep slope should be', cause: 'The driver stage failed short and the gate resistor fused open.', fix: 'Replace R27 **and** check Q7 and the driver U9 before powering up: they usually fail together.', tags: ['phase-leg', 'gate-drive'] },
		conditions: LOW, fault: OPEN, good: R(22)
	},
	{
		fields: { title: 'Pull-up R15 drifted from 10 kΩ to about 47 kΩ', componentKind: 'resistor', partNumber: 'RC0603-10K', package: '0603', assembly: CT, testPoint: 'R15 ↔ 3V3 rail', symptom: 'Slope much flatter than the neighbouring pull-ups', cause: 'Heat from the regulator next to it cooked the film.', fix: 'Replace with a 10 kΩ 0.1 W part; add a thermal pad under U2 on this revision.', tags: ['pull-up', 'heat'] },
		conditions: HIGH_R, fault: R(47_000), good: R(10_000)
	},
	{
		fields: { title: 'Current-limit resistor R40 reads 2.7 kΩ instead of 2.2 kΩ', componentKind: 'resistor', partNumber: 'RC1206-2K2', package: '1206', assembly: PS, testPoint: 'R40 ↔ GND', symptom: 'Current limit trips late; slope slightly too flat', cause: 'Wrong reel fitted at the last repair: 2.7 kΩ parts look identical.', fix: 'Fit 2.2 kΩ; verify the current limit at 1 A on the load bank.', tags: ['current-limit', 'wrong-part'] },
		conditions: MID, fault: R(2700), good: R(2200)
	},
	{
		fields: { title: 'Bus capacitor C3 dielectric shorted', componentKind: 'electrolytic', partNumber: 'EC-470U-400V', package: 'snap-in', assembly: MD, testPoint: 'DC+ ↔ DC−', symptom: 'Reads as a dead short across the DC bus', cause: 'Overvoltage during regenerative braking punched through C3.', fix: 'Replace both bus capacitors as a pair and check the brake chopper Q9.\n\n> **Caution:** bus capacitors can hold a lethal charge. Discharge through a resistor and measure before touching.', tags: ['dc-bus', 'dead-short', 'braking'] },
		conditions: LOW, fault: NEAR_SHORT, good: C(470e-6)
	},
	{
		fields: { title: 'Output electrolytic C12 dried out: 10 µF left as 2.2 µF', componentKind: 'electrolytic', partNumber: 'EC-10U-50V', package: 'radial 5 mm', assembly: PS, testPoint: 'C12 + ↔ C12 −', symptom: 'Ellipse too round and too small compared with the good board', cause: 'Electrolyte dried out: the part sits next to the rectifier heatsink.', fix: 'Replace with a 105 °C part; bend it away from the heatsink.', tags: ['dried-out', 'ripple', 'e-cap'] },
		conditions: MID, fault: C(2.2e-6), good: C(10e-6)
	},
	{
		fields: { title: 'Leaky electrolytic C8 on the 12 V rail', componentKind: 'electrolytic', partNumber: 'EC-4U7-63V', package: 'radial 5 mm', assembly: PS, testPoint: 'C8 + ↔ GND', symptom: 'Ellipse tilted like a resistor: leaky cap', cause: 'Internal leakage path of about 2.2 kΩ.', fix: 'Replace C8; check the rail for ripple afterwards.', tags: ['leaky', 'e-cap', '12v-rail'] },
		conditions: MID, fault: par(C(4.7e-6), R(2200)), good: C(4.7e-6)
	},
	{
		fields: { title: 'Decoupling ceramic C31 cracked open', componentKind: 'capacitor', partNumber: 'CC0805-470N', package: '0805', assembly: CT, testPoint: 'C31 ↔ GND', symptom: 'Flat line where the good board shows an ellipse', cause: 'Board flex at the connector cracked the ceramic.', fix: 'Replace C31; support the board when plugging J3.', tags: ['cracked', 'flex'] },
		conditions: MID, fault: OPEN, good: C(0.47e-6)
	},
	{
		fields: { title: 'Decoupling ceramic C33 cracked and leaking', componentKind: 'capacitor', partNumber: 'CC0805-470N', package: '0805', assembly: CT, testPoint: 'C33 ↔ GND', symptom: 'Ellipse with a resistive tilt on a ceramic that should not leak', cause: 'Flex crack with moisture ingress: about 10 kΩ leakage.', fix: 'Replace C33 and C31 together; they share the crack line.', tags: ['cracked', 'leaky'] },
		conditions: MID, fault: par(C(0.47e-6), R(10_000)), good: C(0.47e-6)
	},
	{
		fields: { title: 'Timing capacitor C5 is 0.47 µF, should be 1 µF', componentKind: 'capacitor', partNumber: 'CC1206-1U', package: '1206', assembly: GD, testPoint: 'C5 ↔ GND', symptom: 'Dead-time too short; ellipse rounder than the reference', cause: 'Wrong value fitted during a previous repair.', fix: 'Fit 1 µF X7R; dead-time returns to spec.', tags: ['wrong-part', 'dead-time'] },
		conditions: MID, fault: C(0.47e-6), good: C(1e-6)
	},
	{
		fields: { title: 'Bootstrap diode D4 shorted', componentKind: 'diode', partNumber: 'DS-1A-600V', package: 'SMA', assembly: GD, testPoint: 'D4 A ↔ D4 K', symptom: 'Vertical line: dead short instead of a knee', cause: 'Avalanche from a ringing high-side node.', fix: 'Replace D4 with the 1 A ultrafast part; add the 10 Ω series resistor from the revision notes.', tags: ['bootstrap', 'dead-short'] },
		conditions: LOW, fault: NEAR_SHORT, good: D_SIGNAL
	},
	{
		fields: { title: 'Bootstrap diode D5 leaky', componentKind: 'diode', partNumber: 'DS-1A-600V', package: 'SMA', assembly: GD, testPoint: 'D5 A ↔ D5 K', symptom: 'Knee present but the reverse side slopes instead of staying flat', cause: 'Junction damaged by heat; about 4.7 kΩ reverse leakage.', fix: 'Replace D5.', tags: ['bootstrap', 'leaky'] },
		conditions: MID, fault: par(D_SIGNAL, R(4700)), good: D_SIGNAL
	},
	{
		fields: { title: 'Freewheel diode D12 open', componentKind: 'diode', partNumber: 'DR-3A-400V', package: 'DO-201', assembly: MD, testPoint: 'D12 A ↔ D12 K', symptom: 'Flat line in both directions', cause: 'Lead fractured inside the body after vibration.', fix: 'Replace D12 and add adhesive to the body.', tags: ['vibration', 'no-continuity'] },
		conditions: MID, fault: OPEN, good: D_RECT
	},
	{
		fields: { title: 'Rectifier D2 fitted backwards', componentKind: 'diode', partNumber: 'DR-1A-1000V', package: 'DO-41', assembly: PS, testPoint: 'D2 pad A ↔ D2 pad K', symptom: 'Knee on the wrong side of the plot', cause: 'Assembly error: the band is on the anode pad.', fix: 'Refit the diode the right way round; check the silkscreen on this batch.', tags: ['polarity', 'assembly-error'] },
		conditions: MID, fault: { ...D_RECT, reversed: true } as DeviceModel, good: D_RECT
	},
	{
		fields: { title: 'Reference zener D9 reads 3.9 V instead of 5.1 V', componentKind: 'zener', partNumber: 'ZD-5V1', package: 'SOD-123', assembly: PS, testPoint: 'D9 K ↔ GND', symptom: 'Second knee too early: output regulates low', cause: 'Wrong zener value from a mixed bin.', fix: 'Fit a 5.1 V zener; the output returns to 12.0 V.', tags: ['zener', 'regulation', 'wrong-part'] },
		conditions: HV, fault: zener(3.9), good: zener(5.1)
	},
	{
		fields: { title: 'Clamp zener D14 shorted', componentKind: 'zener', partNumber: 'ZD-15V', package: 'SOD-123', assembly: MD, testPoint: 'D14 ↔ GND', symptom: 'Dead short where two knees should be', cause: 'Absorbed a gate overvoltage event and failed short, as zeners do.', fix: 'Replace D14; find the cause of the overvoltage (usually the gate resistor).', tags: ['zener', 'dead-short', 'gate-drive'] },
		conditions: HV, fault: NEAR_SHORT, good: zener(15)
	},
	{
		fields: { title: 'TVS on the RS-485 line breaks down at 7 V, should be 12 V', componentKind: 'zener', partNumber: 'TVS-12V', package: 'SOD-323', assembly: CT, testPoint: 'J5 pin 2 ↔ GND', symptom: 'Breakdown knee too low: bus drivers run hot', cause: 'Lower-voltage TVS fitted.', fix: 'Fit the 12 V part listed on the revision D parts list.', tags: ['rs-485', 'tvs', 'wrong-part'] },
		conditions: HV, fault: zener(7), good: zener(12)
	},
	{
		fields: { title: 'MCU input pin PA3 ESD diode leaking', componentKind: 'ic-pin', partNumber: 'MCU-64', package: 'LQFP-64', assembly: CT, testPoint: 'U1 pin 17 ↔ GND', symptom: 'Two-diode curve with a slope in the middle', cause: 'ESD hit through the unprotected test header; about 1 kΩ leak.', fix: 'Replace U1 and add the series resistor on the header line.', tags: ['esd', 'leaky', 'mcu'] },
		conditions: MID, fault: par(IC_PIN, R(1000)), good: IC_PIN
	},
	{
		fields: { title: 'Driver IC output pin open (lifted lead)', componentKind: 'ic-pin', partNumber: 'DRV-8', package: 'SOIC-8', assembly: GD, testPoint: 'U3 pin 6 ↔ GND', symptom: 'Flat line on one pin, normal diode pair on its neighbours', cause: 'Lifted lead: solder joint cracked.', fix: 'Reflow the pin; inspect under magnification.', tags: ['lifted-lead', 'no-continuity'] },
		conditions: MID, fault: OPEN, good: IC_PIN
	},
	{
		fields: { title: 'Driver IC input shorted to ground', componentKind: 'ic-pin', partNumber: 'DRV-8', package: 'SOIC-8', assembly: GD, testPoint: 'U3 pin 2 ↔ GND', symptom: 'Vertical line on the input pin', cause: 'Internal damage after a supply reversal.', fix: 'Replace U3; check the reverse-polarity diode D1.', tags: ['dead-short', 'reverse-polarity'] },
		conditions: LOW, fault: NEAR_SHORT, good: IC_PIN
	},
	{
		fields: { title: 'Output transistor Q4 base-emitter junction shorted', componentKind: 'transistor-junction', partNumber: 'NPN-2A', package: 'TO-126', assembly: PS, testPoint: 'Q4 B ↔ Q4 E', symptom: 'Short where a single knee should be', cause: 'Overcurrent through the pass transistor.', fix: 'Replace Q4 and R40; check the current limit.', tags: ['pass-transistor', 'dead-short'] },
		conditions: LOW, fault: NEAR_SHORT, good: D_SIGNAL
	},
	{
		fields: { title: 'Q4 base-emitter junction leaky (soft knee)', componentKind: 'transistor-junction', partNumber: 'NPN-2A', package: 'TO-126', assembly: PS, testPoint: 'Q4 B ↔ Q4 E', symptom: 'Knee too soft with a slope before it', cause: 'Junction degraded; behaves like a diode with 330 Ω across it.', fix: 'Replace Q4.', tags: ['pass-transistor', 'leaky', 'soft-knee'] },
		conditions: MID, fault: par(D_SIGNAL, R(330)), good: D_SIGNAL
	},
	{
		fields: { title: 'Brake transistor Q9 collector-base open', componentKind: 'transistor-junction', partNumber: 'IGBT-25A', package: 'TO-247', assembly: MD, testPoint: 'Q9 G ↔ Q9 E', symptom: 'Flat line; the good part shows a small capacitance', cause: 'Bond wire fused after a brake resistor short.', fix: 'Replace Q9 and the brake resistor; check the resistor wiring.', tags: ['braking', 'no-continuity'] },
		conditions: HF, fault: OPEN, good: C(2.2e-9)
	},
	{
		fields: { title: 'Output choke L2 with shorted turns', componentKind: 'inductor', partNumber: 'CH-100M', package: 'toroid', assembly: MD, testPoint: 'L2 ↔ L2', symptom: 'Ellipse much narrower than the reference choke', cause: 'Insulation failure between turns: inductance down to about a tenth.', fix: 'Replace L2; check the motor cable for a short that overloaded it.', tags: ['shorted-turns', 'choke'] },
		conditions: LOW, fault: L(0.01, 1.5), good: L(0.1, 4)
	},
	{
		fields: { title: 'Transformer T1 primary winding open', componentKind: 'inductor', partNumber: 'TR-230-15', package: 'EI-48', assembly: PS, testPoint: 'T1 pin 1 ↔ T1 pin 2', symptom: 'Flat line: no continuity through the primary', cause: 'Thermal fuse inside the winding opened.', fix: 'Replace T1; find why it overheated (shorted secondary load).\n\n> **Caution:** the primary is at mains voltage in service. Test it only with the board unplugged.', tags: ['transformer', 'open-circuit', 'mains'] },
		conditions: MID, fault: OPEN, good: L(2.2, 40)
	},
	{
		fields: { title: 'Relay coil K1 resistance too high', componentKind: 'inductor', partNumber: 'RL-12V', package: 'PCB relay', assembly: CT, testPoint: 'K1 coil ↔ coil', symptom: 'Curve reads mostly resistive, too flat', cause: 'Corroded coil termination adds about 1 kΩ.', fix: 'Replace K1.', tags: ['relay', 'corrosion'] },
		conditions: MID, fault: L(0.3, 1400), good: L(0.3, 400)
	},
	{
		fields: { title: 'Connector J3 pin 4 corroded: 470 Ω in series', componentKind: 'connector', partNumber: 'HDR-2x10', package: '2.54 mm header', assembly: CT, testPoint: 'J3 pin 4 ↔ U1 pin 22', symptom: 'Slope where there should be a dead short', cause: 'Corrosion on the header from a leaking cooling fan.', fix: 'Replace the header; clean the board with IPA.', tags: ['corrosion', 'connector'] },
		conditions: MID, fault: R(470), good: R(0.05)
	},
	{
		fields: { title: 'Solder bridge shorts net FB to ground', componentKind: 'connector', partNumber: '', assembly: PS, testPoint: 'TP7 (FB) ↔ GND', symptom: 'Dead short on the feedback net', cause: 'Solder bridge under U5 from rework.', fix: 'Remove the bridge with wick; inspect the neighbouring pins.', tags: ['solder-bridge', 'dead-short', 'rework'] },
		conditions: LOW, fault: NEAR_SHORT, good: par(R(10_000), C(0.1e-6))
	},
	{
		fields: { title: 'Snubber network on the MOSFET drain looks wrong', componentKind: 'other', partNumber: 'RC snubber', assembly: MD, testPoint: 'Q3 D ↔ Q3 S', symptom: 'Strange curve: neither the ellipse nor the diode of the reference', cause: 'Body diode damaged and the snubber capacitor partly open: two faults at once.', fix: 'Replace Q3 and the snubber capacitor C19.', tags: ['snubber', 'mosfet'] },
		conditions: MID, fault: par(ser(R(100), C(0.1e-6)), R(3300), { ...D_SIGNAL, reversed: true } as DeviceModel), good: par(ser(R(100), C(0.47e-6)), { ...D_SIGNAL, reversed: true } as DeviceModel)
	},
	{
		fields: { title: 'Gate oxide punctured on MOSFET Q3', componentKind: 'other', partNumber: 'NMOS-60V', package: 'TO-220', assembly: MD, testPoint: 'Q3 G ↔ Q3 S', symptom: 'Reads short but ohmmeter says 40 Ω', cause: 'Gate overvoltage punctured the oxide: gate to source now about 40 Ω.', fix: 'Replace Q3 and the gate clamp zener D14.', tags: ['gate-oxide', 'mosfet'] },
		conditions: LOW, fault: R(40), good: C(2.2e-9)
	},
	{
		fields: { title: 'NTC thermistor RT1 open', componentKind: 'resistor', partNumber: 'NTC-10K', package: 'radial', assembly: MD, testPoint: 'RT1 ↔ RT1', symptom: 'Flat line; over-temperature alarm at power-up', cause: 'Cracked bead from heatsink clamping pressure.', fix: 'Replace RT1 and re-bed it with thermal compound, not by clamping.', tags: ['thermistor', 'no-continuity'] },
		conditions: HIGH_R, fault: OPEN, good: R(10_000)
	},
	{
		fields: { title: 'Input fuse resistor FR1 reads high', componentKind: 'resistor', partNumber: 'FR-10R', package: 'axial 2 W', assembly: PS, testPoint: 'FR1 ↔ FR1', symptom: 'Slope much flatter than 10 Ω', cause: 'Partially fused after an inrush event: about 330 Ω.', fix: 'Replace FR1 and check the bridge rectifier and the bulk capacitor.', tags: ['inrush', 'fuse-resistor'] },
		conditions: LOW, fault: R(330), good: R(10)
	},
	{
		fields: { title: 'Filter capacitor C21 lost capacitance (1 µF left as 0.22 µF)', componentKind: 'capacitor', partNumber: 'CF-1U-250V', package: 'film box', assembly: MD, testPoint: 'C21 ↔ C21', symptom: 'Ellipse rounder and smaller than the reference', cause: 'Self-healing film capacitor worn out by mains surges.', fix: 'Replace C21 with an X2-rated part.', tags: ['film-cap', 'mains', 'wear'] },
		conditions: MID, fault: C(0.22e-6), good: C(1e-6), status: 'in_review', writer: 'contributor'
	},
	{
		fields: { title: 'Opto-coupler LED U7 open', componentKind: 'diode', partNumber: 'OPTO-1CH', package: 'DIP-4', assembly: CT, testPoint: 'U7 pin 1 ↔ pin 2', symptom: 'No knee on the LED side', cause: 'LED burnt open by a missing series resistor.', fix: 'Replace U7 and fit R52 (1 kΩ), missing from this board.', tags: ['opto', 'no-continuity'] },
		conditions: MID, fault: OPEN, good: ser(D_SIGNAL, R(100)), status: 'in_review', writer: 'contributor'
	},
	{
		fields: { title: 'Sense resistor R61 drifted (1 kΩ → 1.5 kΩ)', componentKind: 'resistor', partNumber: 'RC0805-1K', package: '0805', assembly: GD, testPoint: 'R61 ↔ GND', symptom: 'Overcurrent trip threshold high; slope too flat', cause: 'Overstress during a short-circuit test.', fix: 'Replace R61 with a pulse-rated part.', tags: ['sense', 'drift'] },
		conditions: MID, fault: R(1500), good: R(1000), status: 'in_review', writer: 'contributor'
	},
	{
		fields: { title: 'Possible leaky zener on the 5 V reference (needs a second look)', componentKind: 'zener', partNumber: 'ZD-5V1', package: 'SOD-123', assembly: CT, testPoint: 'D3 K ↔ GND', symptom: 'Both knees present but a slope between them', cause: 'Not confirmed yet: looks like a leak of a few kilohms.', fix: 'To be confirmed after replacing D3.', tags: ['zener', 'leaky'] },
		conditions: HV, fault: par(zener(5.1), R(4700)), good: zener(5.1), status: 'draft', writer: 'contributor',
		reviewComment: 'Please attach the known-good curve from a working CTL-3 and confirm after the swap.'
	},
	{
		fields: { title: 'Bulk capacitor C1 ESR check (draft)', componentKind: 'electrolytic', partNumber: 'EC-220U-35V', package: 'radial 8 mm', assembly: PS, testPoint: 'C1 + ↔ C1 −', symptom: 'Ellipse slightly tilted at 1 kHz', cause: 'Suspected high ESR.', fix: 'Pending.', tags: ['esr', 'e-cap'] },
		conditions: HF, fault: ser(C(220e-6), R(20)), good: C(220e-6), status: 'draft', writer: 'contributor'
	},
	{
		fields: { title: 'Old revision: LED driver zener replaced by a diode', componentKind: 'zener', partNumber: 'ZD-6V2', package: 'DO-35', assembly: 'PS-12 bench supply, rev A', testPoint: 'D7 ↔ GND', symptom: 'Only one knee: zener missing', cause: 'Rev A boards were built with a plain diode here.', fix: 'Fit the 6.2 V zener per the rev B change note.', tags: ['zener', 'old-revision'] },
		conditions: HV, fault: D_SIGNAL, good: zener(6.2), status: 'archived'
	}
];

/** Deterministic noise, so every seeded database looks the same. */
function random(seed: number): () => number {
	let s = seed >>> 0;
	return () => ((s = (s * 1664525 + 1013904223) >>> 0) / 2 ** 32);
}

/** A bench-like capture file of the model: 3.3 periods from a random phase, 0.7 % noise, as CSV. */
function benchCapture(model: DeviceModel, c: TestConditions, rnd: () => number): string {
	const curve = simulate(model, c, { points: 4096 });
	const n = curve.v.length;
	const perPeriod = 600;
	const samples = Math.round(3.3 * perPeriod);
	const start = rnd() * n;
	const isc = c.sourcePeakV / c.sourceResistanceOhm;
	const gauss = () => Math.sqrt(-2 * Math.log(rnd() + 1e-12)) * Math.cos(2 * Math.PI * rnd());
	const at = (arr: number[], x: number) => {
		const k = Math.floor(x) % n;
		const f = x - Math.floor(x);
		return arr[k] * (1 - f) + arr[(k + 1) % n] * f;
	};
	const lines = ['time_s,voltage_V,current_mA'];
	for (let k = 0; k < samples; k++) {
		const x = start + (k * n) / perPeriod;
		const v = at(curve.v, x) + 0.007 * c.sourcePeakV * gauss();
		const i = at(curve.i, x) + 0.007 * isc * gauss();
		lines.push(`${(k / (perPeriod * c.frequencyHz)).toExponential(6)},${v.toPrecision(6)},${(i * 1e3).toPrecision(6)}`);
	}
	return lines.join('\n') + '\n';
}

/**
 * Writes the demo entries with their traces into the demo organisation. Call inside the seeding
 * transaction. `users` maps each demo role to a user id.
 */
export async function seedDemoEntries(trx: Transaction<Database>, orgId: string, users: Record<Writer, string>): Promise<number> {
	const rnd = random(424242);
	for (const [index, demo] of ENTRIES.entries()) {
		const fields = entryCreate.parse({ ...demo.fields, body: demo.fields.body ?? bodyFor(demo) });
		const writerId = users[demo.writer ?? 'author'];
		const id = await insertEntry(trx, orgId, writerId, fields);
		await insertRevision(trx, orgId, id, 1, writerId, snapshotOf(fields), 'Created');

		const text = benchCapture(demo.fault, demo.conditions, rnd);
		const bytes = new TextEncoder().encode(text);
		const upload = traceUpload.parse({ ...demo.conditions, role: 'fault', label: 'As found' });
		await insertTrace(trx, orgId, {
			entryId: id,
			role: 'fault',
			label: 'As found',
			createdBy: writerId,
			processed: processCapture(bytes, upload),
			file: { name: `capture-${String(index + 1).padStart(2, '0')}.csv`, bytes }
		});
		if (demo.good) {
			await insertTrace(trx, orgId, {
				entryId: id,
				role: 'known-good',
				label: 'Expected (simulated)',
				createdBy: writerId,
				processed: processSimulation(demo.good, demo.conditions),
				model: demo.good
			});
		}

		const status = demo.status ?? 'published';
		const daysAgo = ENTRIES.length - index;
		const when = new Date(Date.now() - daysAgo * 86_400_000);
		if (status !== 'draft' || demo.reviewComment) {
			await setEntryStatus(trx, orgId, id, {
				status,
				submittedAt: status === 'draft' ? when : status === 'in_review' ? when : null,
				publishedAt: status === 'published' || status === 'archived' ? when : null,
				reviewerId: status === 'published' || status === 'archived' || demo.reviewComment ? users.author : null,
				reviewComment: demo.reviewComment ?? null
			});
		}
		for (const event of demoReviewSteps(status, demo.reviewComment, when, writerId, users.author)) {
			await insertReviewEvent(trx, orgId, { entryId: id, ...event });
		}
		await recordEntryChange(trx, orgId, id, 'upsert');
	}
	return ENTRIES.length;
}

/** The status changes that led a demo entry to where it is, oldest first, so its review history tells the story. */
function demoReviewSteps(status: EntryStatus, comment: string | undefined, when: Date, writerId: string, authorId: string): Omit<NewReviewEvent, 'entryId'>[] {
	const hour = (h: number) => new Date(when.getTime() + h * 3_600_000);
	const ownWork = writerId === authorId;
	const submit = { actorId: writerId, transition: 'submit', fromStatus: 'draft', toStatus: 'in_review', comment: null, at: when } as const;
	if (status === 'in_review') return [submit];
	if (status === 'draft') {
		return comment ? [submit, { actorId: authorId, transition: 'return', fromStatus: 'in_review', toStatus: 'draft', comment, at: hour(2) }] : [];
	}
	const publish = ownWork
		? ({ actorId: authorId, transition: 'publish', fromStatus: 'draft', toStatus: 'published', comment: null, at: when } as const)
		: ({ actorId: authorId, transition: 'publish', fromStatus: 'in_review', toStatus: 'published', comment: null, at: hour(3) } as const);
	const steps: Omit<NewReviewEvent, 'entryId'>[] = ownWork ? [publish] : [submit, publish];
	if (status === 'archived') steps.push({ actorId: authorId, transition: 'archive', fromStatus: 'published', toStatus: 'archived', comment: null, at: hour(24) });
	return steps;
}

function bodyFor(demo: DemoEntry): string {
	return [
		'## How it was found',
		`Probed **${demo.fields.testPoint || 'the part'}** with the board unpowered and discharged, and compared with a known-good ${demo.fields.assembly ?? 'board'}.`,
		'',
		'## Readings',
		'| | as found | expected |',
		'| --- | --- | --- |',
		`| curve | ${demo.fields.symptom} | see the known-good trace |`,
		'',
		'_Demo entry: the board, the part and the readings are invented._'
	].join('\n');
}

export const DEMO_ENTRY_COUNT = ENTRIES.length;

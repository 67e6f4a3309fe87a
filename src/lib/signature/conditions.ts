import { z } from 'zod';

/** Limits of the test conditions we accept, shared by forms, the API and the engine. */
export const CONDITION_LIMITS = {
	sourcePeakV: { min: 0.05, max: 100 },
	sourceResistanceOhm: { min: 1, max: 10e6 },
	frequencyHz: { min: 1, max: 100e3 }
} as const;

export const testConditions = z.object({
	sourcePeakV: z.coerce
		.number({ error: 'Enter the source peak voltage in volts.' })
		.min(CONDITION_LIMITS.sourcePeakV.min, 'Source peak voltage must be at least 0.05 V.')
		.max(CONDITION_LIMITS.sourcePeakV.max, 'Source peak voltage must be at most 100 V.'),
	sourceResistanceOhm: z.coerce
		.number({ error: 'Enter the source resistance in ohms.' })
		.min(CONDITION_LIMITS.sourceResistanceOhm.min, 'Source resistance must be at least 1 Ω.')
		.max(CONDITION_LIMITS.sourceResistanceOhm.max, 'Source resistance must be at most 10 MΩ.'),
	frequencyHz: z.coerce
		.number({ error: 'Enter the test frequency in hertz.' })
		.min(CONDITION_LIMITS.frequencyHz.min, 'Frequency must be at least 1 Hz.')
		.max(CONDITION_LIMITS.frequencyHz.max, 'Frequency must be at most 100 kHz.')
});

export type TestConditionsInput = z.input<typeof testConditions>;

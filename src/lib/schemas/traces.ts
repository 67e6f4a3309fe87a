import { z } from 'zod';
import { testConditions } from '../signature/conditions';

/**
 * A simulated known-good reference: a device model (checked by the engine's `parseModel`) and the
 * conditions to predict its curve at. JSON body of `POST …/entries/{id}/traces` with `simulate`.
 */
export const simulationUpload = testConditions.extend({
	label: z.string().trim().max(120, 'Keep the label to 120 characters or fewer.').default(''),
	simulate: z.object({ model: z.unknown() }, { error: 'Send "simulate": { "model": … } with the device model.' })
});
export type SimulationUpload = z.infer<typeof simulationUpload>;

/** A trace id from a form field. */
export const uuid = z.string().uuid();

import { env as privateEnv } from '$env/dynamic/private';
import { type Config, loadConfig } from './config';

let cached: Config | undefined;

/** The validated configuration; read on first use, so building the app needs no environment. */
export function config(): Config {
	cached ??= loadConfig(privateEnv);
	return cached;
}

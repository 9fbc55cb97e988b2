import { Inject } from '@nestjs/common';
import type { AppConfig } from '@ausline/contracts';

/**
 * The API's configuration: exactly what libs/contracts loadConfig(process.env) returns (checked at
 * start; see CONFIG_VARIABLES there). Injected with @InjectApiConfig() / @Inject(API_CONFIG).
 */
export type ApiConfig = AppConfig;

export type LogLevel = AppConfig['LOG_LEVEL'];

export const API_CONFIG = Symbol.for('ausline.ApiConfig');

/** Injects the ApiConfig the app was created with. */
export const InjectApiConfig = (): ParameterDecorator => Inject(API_CONFIG);

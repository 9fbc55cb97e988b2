// Shared plain-data types of the drift charts. Everything here is JSON-serialisable (no Infinity, NaN,
// Date or class instances), so a dashboard can draw it and a deviation can carry it as evidence.

/** One lot's value of a charted metric, in the metric's own unit (°C, HV, fraction, ...). */
export interface LotValue {
  lotId: string;
  value: number;
}

/** In-control centre and standard deviation of a metric, in the metric's unit. */
export interface ChartBasis {
  centre: number;
  sigma: number;
}

/** Direction of a signal: a rise, a fall, or a pattern with no direction (stratification, alternation). */
export type SignalDirection = 'up' | 'down' | 'none';

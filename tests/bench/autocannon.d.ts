/** The small part of autocannon 9's API the benchmark uses (the package ships no types). */
declare module 'autocannon' {
  import type { EventEmitter } from 'node:events';

  export interface RequestSpec {
    method?: string;
    path?: string;
    headers?: Record<string, string>;
    body?: string | Buffer;
    /** May rewrite the request before it is sent; `context` is per connection. */
    setupRequest?: (req: RequestSpec, context: Record<string, unknown>) => RequestSpec | null | undefined;
    onResponse?: (status: number, body: string, context: Record<string, unknown>, headers: Record<string, string>) => void;
  }

  export interface Options extends RequestSpec {
    url: string;
    connections?: number;
    duration?: number;
    pipelining?: number;
    timeout?: number;
    requests?: RequestSpec[];
    title?: string;
  }

  export interface Histogram {
    average: number;
    mean: number;
    stddev: number;
    min: number;
    max: number;
    total: number;
    p50: number;
    p90: number;
    p99: number;
  }

  export interface Result {
    title?: string;
    url: string;
    requests: Histogram;
    latency: Histogram;
    throughput: Histogram;
    duration: number;
    errors: number;
    timeouts: number;
    mismatches: number;
    non2xx: number;
    '1xx': number;
    '2xx': number;
    '3xx': number;
    '4xx': number;
    '5xx': number;
    statusCodeStats: Record<string, { count: number }>;
    start: Date;
    finish: Date;
  }

  export interface Instance extends EventEmitter, PromiseLike<Result> {
    stop(): void;
  }

  function autocannon(opts: Options): Instance;
  export default autocannon;
}

// The few autocannon options and events test/bench/crowd.ts uses (the package ships no types).
declare module 'autocannon' {
  interface Options {
    url: string;
    connections?: number;
    amount?: number;
    duration?: number;
    timeout?: number;
    headers?: Record<string, string>;
  }
  interface Instance extends PromiseLike<unknown> {
    on(event: 'response', listener: (client: unknown, statusCode: number, resBytes: number, responseTimeMs: number) => void): this;
  }
  function autocannon(options: Options): Instance;
  export default autocannon;
}

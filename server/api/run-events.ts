// Server-sent progress of a long run (coverage runs, siting runs): one
// `progress` event whenever status/progress/error change, polled from the
// database every half second (the run's state lives there, so any API process
// can follow a run a worker elsewhere computes), then `end`.
import type { FastifyReply, FastifyRequest } from 'fastify';

export interface RunProgressView {
  status: string;
  progress: number;
  error: string | null;
}

const FINISHED = new Set(['done', 'failed', 'cancelled']);

export async function streamRunProgress(request: FastifyRequest, reply: FastifyReply, first: RunProgressView, read: () => Promise<RunProgressView | null>): Promise<void> {
  reply.hijack();
  const res = reply.raw;
  res.writeHead(200, { 'content-type': 'text/event-stream', 'cache-control': 'no-cache', connection: 'keep-alive' });
  let last = '';
  let current: RunProgressView | null = first;
  let open = true;
  request.raw.on('close', () => (open = false));
  while (open && current) {
    const line = JSON.stringify({ status: current.status, progress: current.progress, error: current.error });
    if (line !== last) {
      res.write(`event: progress\ndata: ${line}\n\n`);
      last = line;
    }
    if (FINISHED.has(current.status)) break;
    await new Promise((resolve) => setTimeout(resolve, 500));
    current = await read();
  }
  if (open) res.write(`event: end\ndata: {}\n\n`);
  res.end();
}

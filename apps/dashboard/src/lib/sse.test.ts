import { describe, expect, it } from 'vitest';
import { SseParser } from './sse.js';

// Field rules from the WHATWG HTML standard, "Server-sent events: parsing an event stream".
describe('SseParser', () => {
  it('parses what GET /v1/stream sends, split at arbitrary places', () => {
    const text =
      'retry: 3000\n: connected 2026-03-01T06:00:00.000Z\n\n' +
      'id: 1\nevent: batch.updated\ndata: {"type":"batch.updated","batchId":"b"}\n\n' +
      ': heartbeat 2026-03-01T06:00:15.000Z\n\n';
    const parser = new SseParser();
    const messages = [];
    let comments = 0;
    let retry: number | null = null;
    for (let i = 0; i < text.length; i += 7) {
      const r = parser.push(text.slice(i, i + 7));
      messages.push(...r.messages);
      comments += r.comments;
      retry = r.retryMs ?? retry;
    }
    expect(messages).toEqual([{ event: 'batch.updated', data: '{"type":"batch.updated","batchId":"b"}', id: '1' }]);
    expect(comments).toBe(2);
    expect(retry).toBe(3000);
  });

  it('joins multi-line data and accepts CRLF line ends', () => {
    const r = new SseParser().push('data: a\r\ndata: b\r\n\r\n');
    expect(r.messages).toEqual([{ event: 'message', data: 'a\nb', id: null }]);
  });

  it('does not emit an event before its blank line arrives', () => {
    const p = new SseParser();
    expect(p.push('event: x\ndata: 1\n').messages).toEqual([]);
    expect(p.push('\n').messages).toHaveLength(1);
  });
});

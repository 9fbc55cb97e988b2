/**
 * Incremental parser for server-sent events (the WHATWG "event stream" format): feed it text as it
 * arrives, get back the complete events and whether a comment (the API's heartbeat) was seen. The
 * dashboard reads the stream with fetch rather than EventSource so it can send the session in a header
 * (not in the URL) and can see heartbeats, which is how it tells a quiet stream from a dead one.
 */

export interface SseMessage {
  event: string;
  data: string;
  id: string | null;
}

export interface SseChunkResult {
  messages: SseMessage[];
  /** Comment lines (': heartbeat ...') seen in this chunk. */
  comments: number;
  /** Reconnect delay the server asked for (retry: field), if any. */
  retryMs: number | null;
}

export class SseParser {
  private buffer = '';
  private event = '';
  private data: string[] = [];
  private id: string | null = null;

  push(text: string): SseChunkResult {
    this.buffer += text;
    const result: SseChunkResult = { messages: [], comments: 0, retryMs: null };
    for (;;) {
      const match = /\r\n|\r|\n/.exec(this.buffer);
      if (!match) break;
      // A lone '\r' at the very end may be the first half of '\r\n': wait for more.
      if (match[0] === '\r' && match.index === this.buffer.length - 1) break;
      const line = this.buffer.slice(0, match.index);
      this.buffer = this.buffer.slice(match.index + match[0].length);
      this.line(line, result);
    }
    return result;
  }

  private line(line: string, result: SseChunkResult): void {
    if (line === '') {
      if (this.data.length > 0) result.messages.push({ event: this.event || 'message', data: this.data.join('\n'), id: this.id });
      this.event = '';
      this.data = [];
      return;
    }
    if (line.startsWith(':')) {
      result.comments += 1;
      return;
    }
    const colon = line.indexOf(':');
    const name = colon === -1 ? line : line.slice(0, colon);
    let value = colon === -1 ? '' : line.slice(colon + 1);
    if (value.startsWith(' ')) value = value.slice(1);
    if (name === 'event') this.event = value;
    else if (name === 'data') this.data.push(value);
    else if (name === 'id') this.id = value;
    else if (name === 'retry' && /^\d+$/.test(value)) result.retryMs = Number(value);
  }
}

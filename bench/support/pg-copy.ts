/** The COPY FROM STDIN helper lives with the api's sample ingest, which uses it too. */
export { copyFromStdin } from '../../apps/api/src/ingest/samples-copy.js';

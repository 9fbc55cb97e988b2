import { Body, Controller, Get, Headers, HttpCode, Param, Post, Query, Res } from '@nestjs/common';
import { ApiBody, ApiConsumes, ApiOperation, ApiTags } from '@nestjs/swagger';
import { CHEMISTRY_ELEMENTS, HEAT_CSV_MAX_ROWS, HeatInput, HeatQuery, type Page } from '@ausline/contracts';
import type { Heat } from '@ausline/db';
import { Access, actorName, ANY_ROLE, CurrentPrincipal, type Principal } from '../auth/access.js';
import { ApiError, badRequest } from '../http/errors.js';
import { ApiErrors, ZodBody, ZodQuery } from '../http/openapi.js';
import { parseBody, parseQuery, UuidParam } from '../http/validation.js';
import { parseHeatCsv } from './heat-csv.js';
import { assertCsvBody, HeatsService, type HeatImportReply, type HeatResult, type HeatWithRevisions } from './heats.service.js';
import { Idempotent } from './idempotency.js';
import { countIngest } from './ingest-metrics.js';

interface StatusSettable {
  status(code: number): unknown;
}

const LAB_WRITERS = { keys: 'LAB', roles: ['QUALITY', 'METALLURGIST'] } as const;

@ApiTags('heats')
@Controller()
export class HeatsController {
  constructor(private readonly heats: HeatsService) {}

  @Post('heats')
  @Access({ keys: LAB_WRITERS.keys, roles: [...LAB_WRITERS.roles] })
  @Idempotent('heat')
  @ApiOperation({
    summary: 'Post one heat with its chemistry (wt% per element)',
    description:
      'New heat number: 201 {outcome: "created"}. Same heat again with identical values: 200 {outcome: "unchanged"}. ' +
      'Different material, grade, source or chemistry: 409 naming each differing field, unless `revisionReason` is given: ' +
      'then 200 {outcome: "revised"} with a new revision (the old one is kept) and a recompute of the heat\'s batches.',
  })
  @ZodBody(HeatInput)
  @ApiErrors(400, 409)
  async create(
    @Body() body: unknown,
    @CurrentPrincipal() principal: Principal,
    @Res({ passthrough: true }) res: StatusSettable,
  ): Promise<HeatResult> {
    const result = await countIngest('heat', () => this.heats.upsert(parseBody(HeatInput, body), actorName(principal)));
    res.status(result.outcome === 'created' ? 201 : 200);
    return result;
  }

  @Post('heats/import')
  @HttpCode(200)
  @Access({ keys: LAB_WRITERS.keys, roles: [...LAB_WRITERS.roles] })
  @ApiOperation({
    summary: `Import many heats from a CSV file (text/csv, at most ${HEAT_CSV_MAX_ROWS} rows), all or nothing`,
    description: [
      `Header row, then one heat per row. Columns: heatNumber, material (STEEL or DUCTILE_IRON), grade, source, revisionReason (all but heatNumber and material optional), and one column per element symbol in wt% (${CHEMISTRY_ELEMENTS.join(', ')}; C required). Empty cell = not stated.`,
      'Rows are numbered as a spreadsheet shows them (header = row 1). Any problem refuses the whole file: 400 for malformed rows, 409 for rows that differ from stored heats without a revisionReason; each issue path is rows.<row>.<column>.',
      'A file with ";" separators may use decimal commas.',
    ].join('\n\n'),
  })
  @ApiConsumes('text/csv')
  @ApiBody({ schema: { type: 'string', example: 'heatNumber,material,grade,C,Si,Mn,Cr\nH-24-0117,STEEL,100CrMnSi6-4,0.98,1.45,1.05,1.45\n' } })
  @ApiErrors(400, 409, 413, 415)
  importCsv(
    @Body() body: unknown,
    @Headers('content-type') contentType: string | undefined,
    @CurrentPrincipal() principal: Principal,
  ): Promise<HeatImportReply> {
    return countIngest('heat-csv', async () => {
      const mediaType = (contentType ?? '').split(';')[0]!.trim().toLowerCase();
      if (mediaType !== 'text/csv' && mediaType !== 'text/plain') {
        throw new ApiError(415, `Send the file as text/csv, not ${mediaType || 'no content type'}`, [
          { path: 'headers.content-type', message: 'expected text/csv' },
        ]);
      }
      const parsed = parseHeatCsv(assertCsvBody(body));
      if (!parsed.ok) {
        const first = parsed.issues[0]!;
        throw badRequest(`Import refused, nothing stored: ${first.message}${parsed.issues.length > 1 ? ` (and ${parsed.issues.length - 1} more)` : ''}`, parsed.issues);
      }
      return this.heats.importRows(parsed.heats, actorName(principal));
    });
  }

  @Get('heats')
  @Access({ roles: ANY_ROLE })
  @ApiOperation({ summary: 'Heats, newest first, with paging (limit, cursor) and the total count' })
  @ZodQuery(HeatQuery)
  @ApiErrors(400)
  list(@Query() query: unknown): Promise<Page<Heat>> {
    return this.heats.list(parseQuery(HeatQuery, query));
  }

  @Get('heats/:id')
  @Access({ roles: ANY_ROLE })
  @ApiOperation({ summary: 'One heat with every revision of its chemistry (who, when, why)' })
  @ApiErrors(400, 404)
  get(@Param('id', UuidParam) id: string): Promise<HeatWithRevisions> {
    return this.heats.get(id);
  }
}

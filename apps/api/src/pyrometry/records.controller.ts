import { Body, Controller, Get, Param, Post, Put, Query, Res } from '@nestjs/common';
import { ApiOperation, ApiTags } from '@nestjs/swagger';
import { Access, actorName, ANY_ROLE, CurrentPrincipal, type Principal } from '../auth/access.js';
import { ApiErrors, ZodBody, ZodQuery } from '../http/openapi.js';
import { parseBody, parseQuery, UuidParam } from '../http/validation.js';
import { CalibrationInput, DueQuery, EquipmentRecordInput, InstrumentInput, ReferenceQuery, RetireInput, SensorInput, SensorListQuery } from './pyrometry.schemas.js';
import { PyrometryRecordsService, type Outcome } from './records.service.js';

interface StatusSettable {
  status(code: number): unknown;
}

/** 201 when something was stored, 200 when a retry found it already there (or only updated it). */
function statusFor(res: StatusSettable, outcome: Outcome): void {
  res.status(outcome === 'created' ? 201 : 200);
}

/**
 * Pyrometry records (issue 8): admins maintain the record of each furnace and bath, its sensors,
 * instruments and their calibration certificates; everyone signed in reads status, due lists and the
 * reference data (with every value that is not confirmed for the revision flagged).
 */
@ApiTags('pyrometry')
@Controller()
export class PyrometryRecordsController {
  constructor(private readonly records: PyrometryRecordsService) {}

  @Put('equipment/:id/pyrometry')
  @Access({ roles: ['ADMIN'] })
  @ApiOperation({
    summary: "Set a furnace's or bath's pyrometry record: class, instrumentation type, standard and revision, customer overlay",
    description: 'A customer overlay may only tighten a value or fill one the standard does not give; a looser entry refuses the whole record (400 naming customerOverlay.entries.<i>).',
  })
  @ZodBody(EquipmentRecordInput)
  @ApiErrors(400, 404)
  async putRecord(@Param('id', UuidParam) id: string, @Body() body: unknown, @Res({ passthrough: true }) res: StatusSettable) {
    const out = await this.records.putEquipmentRecord(id, parseBody(EquipmentRecordInput, body));
    statusFor(res, out.outcome);
    return out;
  }

  @Get('equipment/:id/pyrometry')
  @Access({ roles: ANY_ROLE })
  @ApiOperation({ summary: 'Pyrometry status of one piece of equipment: compliance now (or ?at=), due items, sensors with uses, recent tests, suspect triggers' })
  @ZodQuery(DueQuery)
  @ApiErrors(400, 404)
  status(@Param('id', UuidParam) id: string, @Query() query: unknown) {
    const q = parseQuery(DueQuery, query);
    return this.records.equipmentStatus(id, q.at ?? new Date());
  }

  @Get('lines/:id/pyrometry/due')
  @Access({ roles: ANY_ROLE })
  @ApiOperation({ summary: 'What is due or overdue on a line: surveys, accuracy tests, calibrations, sensor replacements, and the test kit' })
  @ZodQuery(DueQuery)
  @ApiErrors(400, 404)
  due(@Param('id', UuidParam) id: string, @Query() query: unknown) {
    const q = parseQuery(DueQuery, query);
    return this.records.lineDueList(id, q.at ?? new Date(), q.dueSoonDays);
  }

  @Get('pyrometry/references')
  @Access({ roles: ANY_ROLE })
  @ApiOperation({ summary: 'Reference data per standard and revision, every value with its source and whether it is confirmed' })
  @ZodQuery(ReferenceQuery)
  @ApiErrors(400)
  references(@Query() query: unknown) {
    const q = parseQuery(ReferenceQuery, query);
    return this.records.references({ ...(q.standard ? { standard: q.standard } : {}), ...(q.revision ? { revision: q.revision } : {}), unconfirmedOnly: q.unconfirmedOnly === 'true' });
  }

  // --- sensors ---------------------------------------------------------------------------------

  @Post('pyrometry/sensors')
  @Access({ roles: ['ADMIN'] })
  @ApiOperation({ summary: 'Register a thermocouple (on a channel, or a test sensor of the test kit), optionally with its certificate' })
  @ZodBody(SensorInput)
  @ApiErrors(400, 409, 422)
  async createSensor(@Body() body: unknown, @CurrentPrincipal() principal: Principal, @Res({ passthrough: true }) res: StatusSettable) {
    const out = await this.records.createSensor(parseBody(SensorInput, body), actorName(principal));
    statusFor(res, out.outcome);
    return out;
  }

  @Get('pyrometry/sensors')
  @Access({ roles: ANY_ROLE })
  @ApiOperation({ summary: 'Sensors, with uses so far (?equipmentId= or ?testKit=true)' })
  @ZodQuery(SensorListQuery)
  @ApiErrors(400)
  listSensors(@Query() query: unknown) {
    const q = parseQuery(SensorListQuery, query);
    return this.records.listSensors({ ...(q.equipmentId ? { equipmentId: q.equipmentId } : {}), testKit: q.testKit === 'true' });
  }

  @Get('pyrometry/sensors/:id')
  @Access({ roles: ANY_ROLE })
  @ApiOperation({ summary: 'One sensor with its certificates (newest first) and uses so far' })
  @ApiErrors(400, 404)
  getSensor(@Param('id', UuidParam) id: string) {
    return this.records.getSensor(id);
  }

  @Post('pyrometry/sensors/:id/calibrations')
  @Access({ roles: ['ADMIN'] })
  @ApiOperation({ summary: "Add a sensor's calibration certificate; each point is judged against the accuracy limit for its use (a failure opens the suspect-product look-back)" })
  @ZodBody(CalibrationInput)
  @ApiErrors(400, 404, 409, 422)
  async addSensorCalibration(@Param('id', UuidParam) id: string, @Body() body: unknown, @CurrentPrincipal() principal: Principal, @Res({ passthrough: true }) res: StatusSettable) {
    const out = await this.records.addSensorCalibration(id, parseBody(CalibrationInput, body), actorName(principal));
    statusFor(res, out.outcome);
    return out;
  }

  @Post('pyrometry/sensors/:id/retire')
  @Access({ roles: ['ADMIN'] })
  @ApiOperation({ summary: 'Take a sensor out of service' })
  @ZodBody(RetireInput)
  @ApiErrors(400, 404, 409)
  async retireSensor(@Param('id', UuidParam) id: string, @Body() body: unknown, @Res({ passthrough: true }) res: StatusSettable) {
    const out = await this.records.retireSensor(id, parseBody(RetireInput, body).retiredAt);
    res.status(200);
    return out;
  }

  // --- instruments -----------------------------------------------------------------------------

  @Post('pyrometry/instruments')
  @Access({ roles: ['ADMIN'] })
  @ApiOperation({ summary: 'Register a controller, recorder or field test instrument, optionally with its certificate' })
  @ZodBody(InstrumentInput)
  @ApiErrors(400, 409, 422)
  async createInstrument(@Body() body: unknown, @CurrentPrincipal() principal: Principal, @Res({ passthrough: true }) res: StatusSettable) {
    const out = await this.records.createInstrument(parseBody(InstrumentInput, body), actorName(principal));
    statusFor(res, out.outcome);
    return out;
  }

  @Get('pyrometry/instruments')
  @Access({ roles: ANY_ROLE })
  @ApiOperation({ summary: 'Instruments (?equipmentId= or ?testKit=true)' })
  @ZodQuery(SensorListQuery)
  @ApiErrors(400)
  listInstruments(@Query() query: unknown) {
    const q = parseQuery(SensorListQuery, query);
    return this.records.listInstruments({ ...(q.equipmentId ? { equipmentId: q.equipmentId } : {}), testKit: q.testKit === 'true' });
  }

  @Post('pyrometry/instruments/:id/calibrations')
  @Access({ roles: ['ADMIN'] })
  @ApiOperation({ summary: "Add an instrument's calibration certificate, judged against the instrument accuracy for its use" })
  @ZodBody(CalibrationInput)
  @ApiErrors(400, 404, 409, 422)
  async addInstrumentCalibration(@Param('id', UuidParam) id: string, @Body() body: unknown, @CurrentPrincipal() principal: Principal, @Res({ passthrough: true }) res: StatusSettable) {
    const out = await this.records.addInstrumentCalibration(id, parseBody(CalibrationInput, body), actorName(principal));
    statusFor(res, out.outcome);
    return out;
  }

  @Post('pyrometry/instruments/:id/retire')
  @Access({ roles: ['ADMIN'] })
  @ApiOperation({ summary: 'Take an instrument out of service' })
  @ZodBody(RetireInput)
  @ApiErrors(400, 404, 409)
  async retireInstrument(@Param('id', UuidParam) id: string, @Body() body: unknown, @Res({ passthrough: true }) res: StatusSettable) {
    const out = await this.records.retireInstrument(id, parseBody(RetireInput, body).retiredAt);
    res.status(200);
    return out;
  }
}

import { Body, Controller, Get, Param, Post } from '@nestjs/common';
import { ApiOperation, ApiTags } from '@nestjs/swagger';
import { CreateChannelRequest, CreateEquipmentRequest, CreateLineRequest } from '@ausline/contracts';
import type { Channel, Equipment, Line } from '@ausline/db';
import { Access, ANY_ROLE } from '../auth/access.js';
import { ApiErrors, ZodBody } from '../http/openapi.js';
import { parseBody, UuidParam } from '../http/validation.js';
import { PlantService, type EquipmentWithChannels, type LineWithEquipment } from './plant.service.js';

/**
 * Plant structure. Changing it is for admins; reading it is for every signed-in user (dashboards
 * filter by line), and a controller's EQUIPMENT key may read its own equipment and channels.
 */
@ApiTags('plant')
@Controller()
export class PlantController {
  constructor(private readonly plant: PlantService) {}

  @Post('lines')
  @Access({ roles: ['ADMIN'] })
  @ApiOperation({ summary: 'Create a line (a furnace plus its austempering bath); an existing code answers 409' })
  @ZodBody(CreateLineRequest)
  @ApiErrors(400, 409)
  createLine(@Body() body: unknown): Promise<Line> {
    return this.plant.createLine(parseBody(CreateLineRequest, body));
  }

  @Get('lines')
  @Access({ roles: ANY_ROLE })
  @ApiOperation({ summary: 'All lines with their equipment and channels' })
  listLines(): Promise<LineWithEquipment[]> {
    return this.plant.listLines();
  }

  @Get('lines/:id')
  @Access({ roles: ANY_ROLE })
  @ApiOperation({ summary: 'One line with its equipment and channels' })
  @ApiErrors(400, 404)
  getLine(@Param('id', UuidParam) id: string): Promise<LineWithEquipment> {
    return this.plant.getLine(id);
  }

  @Post('lines/:id/equipment')
  @Access({ roles: ['ADMIN'] })
  @ApiOperation({ summary: 'Add a furnace or bath to a line; an existing equipment code answers 409' })
  @ZodBody(CreateEquipmentRequest)
  @ApiErrors(400, 404, 409)
  createEquipment(@Param('id', UuidParam) lineId: string, @Body() body: unknown): Promise<Equipment> {
    return this.plant.createEquipment(lineId, parseBody(CreateEquipmentRequest, body));
  }

  @Get('lines/:id/equipment')
  @Access({ roles: ANY_ROLE })
  @ApiOperation({ summary: 'The equipment of a line with its channels' })
  @ApiErrors(400, 404)
  listEquipment(@Param('id', UuidParam) lineId: string): Promise<EquipmentWithChannels[]> {
    return this.plant.listEquipment(lineId);
  }

  @Get('equipment/:id')
  @Access({ roles: ANY_ROLE, keys: 'EQUIPMENT', equipmentParam: 'id' })
  @ApiOperation({ summary: 'One piece of equipment with its channels (an EQUIPMENT key: only its own)' })
  @ApiErrors(400, 404)
  getEquipment(@Param('id', UuidParam) id: string): Promise<EquipmentWithChannels> {
    return this.plant.getEquipment(id);
  }

  @Post('equipment/:id/channels')
  @Access({ roles: ['ADMIN'] })
  @ApiOperation({ summary: 'Add a channel (a measured signal) to a piece of equipment; an existing code answers 409' })
  @ZodBody(CreateChannelRequest)
  @ApiErrors(400, 404, 409)
  createChannel(@Param('id', UuidParam) equipmentId: string, @Body() body: unknown): Promise<Channel> {
    return this.plant.createChannel(equipmentId, parseBody(CreateChannelRequest, body));
  }

  @Get('equipment/:id/channels')
  @Access({ roles: ANY_ROLE, keys: 'EQUIPMENT', equipmentParam: 'id' })
  @ApiOperation({ summary: 'The channels of a piece of equipment (an EQUIPMENT key: only its own)' })
  @ApiErrors(400, 404)
  listChannels(@Param('id', UuidParam) equipmentId: string): Promise<Channel[]> {
    return this.plant.listChannels(equipmentId);
  }
}

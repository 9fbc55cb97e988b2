import { Injectable } from '@nestjs/common';
import type { CreateChannelRequest, CreateEquipmentRequest, CreateLineRequest } from '@ausline/contracts';
import type { Channel, Equipment, Line, PrismaClient } from '@ausline/db';
import { conflict, notFound } from '../http/errors.js';
import { InjectPrisma, isUniqueViolation } from '../prisma.provider.js';

export type LineWithEquipment = Line & { equipment: Array<Equipment & { channels: Channel[] }> };
export type EquipmentWithChannels = Equipment & { channels: Channel[] };

/**
 * Lines, their equipment (furnace, bath) and the equipment's channels. Codes are unique, so a
 * retried create finds the existing row and answers 409 naming it instead of storing a second one.
 */
@Injectable()
export class PlantService {
  constructor(@InjectPrisma() private readonly prisma: PrismaClient) {}

  async createLine(input: CreateLineRequest): Promise<Line> {
    try {
      return await this.prisma.line.create({
        data: {
          code: input.code,
          name: input.name,
          timeZone: input.timeZone,
          ...(input.hCoefficientByAgitation ? { hCoefficientByAgitation: input.hCoefficientByAgitation } : {}),
        },
      });
    } catch (error) {
      if (!isUniqueViolation(error)) throw error;
      const existing = await this.prisma.line.findUnique({ where: { code: input.code } });
      throw conflict(`A line with code '${input.code}' already exists${existing ? ` (id ${existing.id})` : ''}`, [
        { path: 'code', message: 'already in use' },
      ]);
    }
  }

  listLines(): Promise<LineWithEquipment[]> {
    return this.prisma.line.findMany({
      orderBy: { code: 'asc' },
      include: { equipment: { orderBy: { code: 'asc' }, include: { channels: { orderBy: { code: 'asc' } } } } },
    });
  }

  async getLine(id: string): Promise<LineWithEquipment> {
    const line = await this.prisma.line.findUnique({
      where: { id },
      include: { equipment: { orderBy: { code: 'asc' }, include: { channels: { orderBy: { code: 'asc' } } } } },
    });
    if (!line) throw notFound(`No line with id ${id}`);
    return line;
  }

  async createEquipment(lineId: string, input: CreateEquipmentRequest): Promise<Equipment> {
    await this.requireLine(lineId);
    try {
      return await this.prisma.equipment.create({ data: { lineId, kind: input.kind, code: input.code, name: input.name } });
    } catch (error) {
      if (!isUniqueViolation(error)) throw error;
      const existing = await this.prisma.equipment.findUnique({ where: { code: input.code } });
      throw conflict(
        `Equipment with code '${input.code}' already exists${existing ? ` (id ${existing.id}, line ${existing.lineId})` : ''}`,
        [{ path: 'code', message: 'already in use' }],
      );
    }
  }

  async listEquipment(lineId: string): Promise<EquipmentWithChannels[]> {
    await this.requireLine(lineId);
    return this.prisma.equipment.findMany({
      where: { lineId },
      orderBy: { code: 'asc' },
      include: { channels: { orderBy: { code: 'asc' } } },
    });
  }

  async getEquipment(id: string): Promise<EquipmentWithChannels> {
    const equipment = await this.prisma.equipment.findUnique({ where: { id }, include: { channels: { orderBy: { code: 'asc' } } } });
    if (!equipment) throw notFound(`No equipment with id ${id}`);
    return equipment;
  }

  async createChannel(equipmentId: string, input: CreateChannelRequest): Promise<Channel> {
    const equipment = await this.prisma.equipment.findUnique({ where: { id: equipmentId }, select: { id: true, code: true } });
    if (!equipment) throw notFound(`No equipment with id ${equipmentId}`);
    try {
      return await this.prisma.channel.create({ data: { equipmentId, code: input.code, quantity: input.quantity, role: input.role } });
    } catch (error) {
      if (!isUniqueViolation(error)) throw error;
      const existing = await this.prisma.channel.findUnique({ where: { equipmentId_code: { equipmentId, code: input.code } } });
      throw conflict(
        `Equipment '${equipment.code}' already has a channel '${input.code}'${existing ? ` (id ${existing.id})` : ''}`,
        [{ path: 'code', message: 'already in use on this equipment' }],
      );
    }
  }

  async listChannels(equipmentId: string): Promise<Channel[]> {
    const equipment = await this.prisma.equipment.findUnique({ where: { id: equipmentId }, select: { id: true } });
    if (!equipment) throw notFound(`No equipment with id ${equipmentId}`);
    return this.prisma.channel.findMany({ where: { equipmentId }, orderBy: { code: 'asc' } });
  }

  private async requireLine(lineId: string): Promise<void> {
    const line = await this.prisma.line.findUnique({ where: { id: lineId }, select: { id: true } });
    if (!line) throw notFound(`No line with id ${lineId}`);
  }
}

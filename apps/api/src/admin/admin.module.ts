import { Module } from '@nestjs/common';
import { ApiKeysService } from './api-keys.service.js';
import { PeopleController } from './people.controller.js';
import { PlantController } from './plant.controller.js';
import { PlantService } from './plant.service.js';
import { UsersService } from './users.service.js';

/** Plant structure (lines, equipment, channels), users and API keys. */
@Module({
  controllers: [PlantController, PeopleController],
  providers: [PlantService, UsersService, ApiKeysService],
  exports: [PlantService, UsersService, ApiKeysService],
})
export class AdminModule {}

/* eslint-disable */
// @ts-nocheck
// Generated from schema/manifest.schema.json by tests/io/manifestValidator.test.ts (Ajv standalone code,
// options allErrors false, strict false): do not edit; regenerate with FASCICLE_WRITE_VALIDATOR=1.
const schema11 = {
  $schema: 'http://json-schema.org/draft-07/schema#',
  $id: 'fascicle-manifest-1',
  title: 'fascicle study manifest',
  description:
    'Lists the recording files of a study and joins each file or sweep with its experimental conditions. Paths are relative to the manifest.',
  type: 'object',
  required: ['fascicleManifest', 'files'],
  additionalProperties: false,
  definitions: {
    conditions: {
      type: 'object',
      additionalProperties: { type: ['string', 'number', 'boolean', 'null'] },
      properties: {
        preparation: { type: 'string' },
        intensity: { type: 'number' },
        intensityUnit: { type: 'string' },
        pulseWidthMs: { type: 'number', exclusiveMinimum: 0 },
        site: { type: 'string' },
        distanceMm: { type: 'number', exclusiveMinimum: 0 },
        drug: { type: ['string', 'null'] },
        concentration: { type: 'number', minimum: 0 },
        concentrationUnit: { type: 'string' },
        temperatureC: { type: 'number', minimum: -5, maximum: 50 },
        acquiredS: { type: 'number' },
        repeat: { type: 'integer', minimum: 0 },
        polarity: { enum: [1, -1] },
        epoch: { type: 'string' },
        series: {
          enum: ['intensity', 'distance', 'dose', 'temperature', 'pulse-width', 'paired-pulse', 'train', null],
          description: 'Which analysis the sweeps are for (the standard pipeline looks for these names).',
        },
      },
    },
  },
  properties: {
    fascicleManifest: { const: 1, description: 'Format version of this manifest.' },
    study: { type: 'string' },
    description: { type: 'string' },
    species: { type: 'string' },
    nerve: { type: 'string' },
    classPreset: {
      enum: ['mammalian', 'mammalian-detailed', 'amphibian'],
      description: 'Fiber-class preset of the components step (same as analysis.components.preset).',
    },
    required: {
      type: 'array',
      items: { type: 'string' },
      description: 'Condition keys every sweep must have (default: preparation).',
    },
    defaults: { $ref: '#/definitions/conditions' },
    blinding: {
      type: 'object',
      required: ['coded'],
      additionalProperties: false,
      description:
        'Blinded analysis (ARRIVE 2.0 item 5): the values of one condition are codes; the key that maps them to the real labels is kept outside the study and applied afterwards with fascicle unblind.',
      properties: {
        coded: {
          type: 'boolean',
          description: "The condition's values are codes (a key file inside the study folder is then refused).",
        },
        condition: { type: 'string', minLength: 1, description: 'The coded condition (default group).' },
      },
    },
    analysis: {
      type: 'object',
      description:
        'Options for the standard pipeline of the command line; the manifest reader checks every key (the nearest valid name for a typo) and the values of the fit options.',
      properties: {
        baseline: {
          description: 'Baseline subtraction (object, or false to skip).',
          properties: { window: {}, method: {}, lateWindow: {} },
        },
        artifact: {
          description: 'Stimulus-artifact removal: one step, a list of steps applied in order, or false.',
          properties: {
            method: {},
            window: {},
            bridge: {},
            maxIntensity: {},
            templateSweeps: {},
            templateBy: {},
            scaling: {},
            fitWindow: {},
            tailWindow: {},
            exponentials: {},
          },
        },
        hum: {
          description: 'Mains-hum removal (object, or false).',
          properties: { frequency: {}, harmonics: {}, exclude: {}, drift: {} },
        },
        filter: {
          description: 'Zero-phase Butterworth filter (object, or false).',
          properties: { btype: {}, cutoff: {}, order: {}, padlen: {} },
        },
        averageRepeats: {
          type: 'boolean',
          description: 'Average the repeats of each condition before measuring (default true).',
        },
        poolSites: {
          type: 'boolean',
          description:
            'One dose-response and temperature curve over all recording sites (default false: one per site).',
        },
        components: {
          description:
            'Fiber-class components: preset, windows, latency definitions, polarity (1, -1, "auto" or per class), separation.',
          properties: {
            preset: {},
            classes: {},
            distanceMm: {},
            temperatureC: {},
            q10: {},
            utilisationMs: {},
            k: {},
            polarity: {},
            noiseWindow: {},
            tailFraction: {},
            tailMs: {},
            earliestMs: {},
            onsetFraction: {},
            centroidFraction: {},
            separation: {},
            decomposeBy: {},
            referenceDistanceMm: {},
            localBaseline: {},
          },
        },
        doseResponse: {
          description: 'Dose-response (Hill) fits.',
          properties: {
            measure: {},
            lastN: {},
            runDown: {},
            fixBottom: {},
            bootstrap: {},
            seed: {},
            classes: {},
            poolSites: {},
            minConcentrations: {},
            maxLatencyShift: {},
            belowDetection: {},
            freeTop: {},
          },
        },
        recruitment: {
          description: 'Recruitment curves.',
          properties: { measure: {}, by: {}, supramaximalFactor: {}, minLevels: {}, belowDetection: {} },
        },
        strengthDuration: {
          description: 'Strength-duration (Weiss and Lapicque) fits.',
          properties: { measure: {}, by: {}, fraction: {} },
        },
        temperature: { description: 'Temperature dependence (Q10).', properties: { measure: {} } },
        qc: {
          description: 'Per-sweep quality control (object, or false).',
          properties: {
            quietWindow: {},
            endWindow: {},
            artifactWindow: {},
            responseWindow: {},
            by: {},
            peerBy: {},
            maxNoiseRatio: {},
            minNoiseRatio: {},
            maxDriftRatio: {},
            maxArtifactRatio: {},
            railRun: {},
            outlierThreshold: {},
            outlierMinScale: {},
            minSweeps: {},
          },
        },
        reject: {
          description: 'Remove QC-flagged sweeps: true, false, or { flags: [...] }.',
          properties: { flags: {} },
        },
        pairedPulse: {
          description: 'Paired-pulse recovery of the sweeps of series paired-pulse (object, or false).',
          properties: {
            by: {},
            roleKey: {},
            intervalKey: {},
            latency: {},
            measure: {},
            blankMs: {},
            extrapolateMs: {},
            minIntervals: {},
          },
        },
        trains: {
          description: 'Responses to stimulus trains of the sweeps of series train (object, or false).',
          properties: { by: {}, frequencyKey: {}, pulsesKey: {}, latency: {}, blankMs: {}, failFraction: {} },
        },
        groups: {
          description:
            'Group statistics across preparations (value required; table: components or velocity; levels: the order of groups or conditions, else first appearance).',
          properties: { value: {}, group: {}, animal: {}, condition: {}, by: {}, unit: {}, levels: {}, table: {} },
        },
        mixed: {
          description: 'Random-intercept mixed model across preparations (value and fixed required).',
          properties: { value: {}, fixed: {}, random: {}, interaction: {}, by: {}, levels: {}, table: {} },
        },
        velocityDistribution: {
          description: 'Conduction-velocity distribution (opt-in, slow).',
          properties: {
            method: {},
            velocityRange: {},
            nVelocities: {},
            fitWindow: {},
            fitStartByDistance: {},
            fitEnd: {},
            sfp: {},
            sfpWindow: {},
            sfpModel: {},
            support: {},
            sfpRefine: {},
            sfpSmoothing: {},
            amplitudeExponent: {},
            durationExponent: {},
            referenceVelocity: {},
            bipolarSeparationMm: {},
            utilisationMs: {},
            drift: {},
            artifactTauMs: {},
            humHz: {},
            noiseWindow: {},
            iterations: {},
            tolerance: {},
            lambda: {},
            alternationLambda: {},
            bootstrap: {},
            seed: {},
            classes: {},
            temperatureC: {},
          },
        },
      },
    },
    files: {
      type: 'array',
      minItems: 1,
      items: {
        type: 'object',
        required: ['path'],
        additionalProperties: false,
        properties: {
          path: { type: 'string', minLength: 1 },
          format: {
            enum: ['delimited', 'binary', 'nwb'],
            description:
              'Reader of the file (default from the extension: .json binary sidecar, .nwb NWB, otherwise delimited text).',
          },
          options: { type: 'object' },
          conditions: { $ref: '#/definitions/conditions' },
          sweeps: { type: 'array', items: { $ref: '#/definitions/conditions' } },
        },
      },
    },
  },
};
const schema12 = {
  type: 'object',
  additionalProperties: { type: ['string', 'number', 'boolean', 'null'] },
  properties: {
    preparation: { type: 'string' },
    intensity: { type: 'number' },
    intensityUnit: { type: 'string' },
    pulseWidthMs: { type: 'number', exclusiveMinimum: 0 },
    site: { type: 'string' },
    distanceMm: { type: 'number', exclusiveMinimum: 0 },
    drug: { type: ['string', 'null'] },
    concentration: { type: 'number', minimum: 0 },
    concentrationUnit: { type: 'string' },
    temperatureC: { type: 'number', minimum: -5, maximum: 50 },
    acquiredS: { type: 'number' },
    repeat: { type: 'integer', minimum: 0 },
    polarity: { enum: [1, -1] },
    epoch: { type: 'string' },
    series: {
      enum: ['intensity', 'distance', 'dose', 'temperature', 'pulse-width', 'paired-pulse', 'train', null],
      description: 'Which analysis the sweeps are for (the standard pipeline looks for these names).',
    },
  },
};
const func2 = Object.prototype.hasOwnProperty;
const func4 = require('ajv/dist/runtime/ucs2length').default;
function validate10(data, { instancePath = '', parentData, parentDataProperty, rootData = data } = {}) {
  /*# sourceURL="fascicle-manifest-1" */ let vErrors = null;
  let errors = 0;
  if (errors === 0) {
    if (data && typeof data == 'object' && !Array.isArray(data)) {
      let missing0;
      if (
        (data.fascicleManifest === undefined && (missing0 = 'fascicleManifest')) ||
        (data.files === undefined && (missing0 = 'files'))
      ) {
        validate10.errors = [
          {
            instancePath,
            schemaPath: '#/required',
            keyword: 'required',
            params: { missingProperty: missing0 },
            message: "must have required property '" + missing0 + "'",
          },
        ];
        return false;
      } else {
        const _errs1 = errors;
        for (const key0 in data) {
          if (!func2.call(schema11.properties, key0)) {
            validate10.errors = [
              {
                instancePath,
                schemaPath: '#/additionalProperties',
                keyword: 'additionalProperties',
                params: { additionalProperty: key0 },
                message: 'must NOT have additional properties',
              },
            ];
            return false;
            break;
          }
        }
        if (_errs1 === errors) {
          if (data.fascicleManifest !== undefined) {
            const _errs2 = errors;
            if (1 !== data.fascicleManifest) {
              validate10.errors = [
                {
                  instancePath: instancePath + '/fascicleManifest',
                  schemaPath: '#/properties/fascicleManifest/const',
                  keyword: 'const',
                  params: { allowedValue: 1 },
                  message: 'must be equal to constant',
                },
              ];
              return false;
            }
            var valid0 = _errs2 === errors;
          } else {
            var valid0 = true;
          }
          if (valid0) {
            if (data.study !== undefined) {
              const _errs3 = errors;
              if (typeof data.study !== 'string') {
                validate10.errors = [
                  {
                    instancePath: instancePath + '/study',
                    schemaPath: '#/properties/study/type',
                    keyword: 'type',
                    params: { type: 'string' },
                    message: 'must be string',
                  },
                ];
                return false;
              }
              var valid0 = _errs3 === errors;
            } else {
              var valid0 = true;
            }
            if (valid0) {
              if (data.description !== undefined) {
                const _errs5 = errors;
                if (typeof data.description !== 'string') {
                  validate10.errors = [
                    {
                      instancePath: instancePath + '/description',
                      schemaPath: '#/properties/description/type',
                      keyword: 'type',
                      params: { type: 'string' },
                      message: 'must be string',
                    },
                  ];
                  return false;
                }
                var valid0 = _errs5 === errors;
              } else {
                var valid0 = true;
              }
              if (valid0) {
                if (data.species !== undefined) {
                  const _errs7 = errors;
                  if (typeof data.species !== 'string') {
                    validate10.errors = [
                      {
                        instancePath: instancePath + '/species',
                        schemaPath: '#/properties/species/type',
                        keyword: 'type',
                        params: { type: 'string' },
                        message: 'must be string',
                      },
                    ];
                    return false;
                  }
                  var valid0 = _errs7 === errors;
                } else {
                  var valid0 = true;
                }
                if (valid0) {
                  if (data.nerve !== undefined) {
                    const _errs9 = errors;
                    if (typeof data.nerve !== 'string') {
                      validate10.errors = [
                        {
                          instancePath: instancePath + '/nerve',
                          schemaPath: '#/properties/nerve/type',
                          keyword: 'type',
                          params: { type: 'string' },
                          message: 'must be string',
                        },
                      ];
                      return false;
                    }
                    var valid0 = _errs9 === errors;
                  } else {
                    var valid0 = true;
                  }
                  if (valid0) {
                    if (data.classPreset !== undefined) {
                      let data5 = data.classPreset;
                      const _errs11 = errors;
                      if (!(data5 === 'mammalian' || data5 === 'mammalian-detailed' || data5 === 'amphibian')) {
                        validate10.errors = [
                          {
                            instancePath: instancePath + '/classPreset',
                            schemaPath: '#/properties/classPreset/enum',
                            keyword: 'enum',
                            params: { allowedValues: schema11.properties.classPreset.enum },
                            message: 'must be equal to one of the allowed values',
                          },
                        ];
                        return false;
                      }
                      var valid0 = _errs11 === errors;
                    } else {
                      var valid0 = true;
                    }
                    if (valid0) {
                      if (data.required !== undefined) {
                        let data6 = data.required;
                        const _errs12 = errors;
                        if (errors === _errs12) {
                          if (Array.isArray(data6)) {
                            var valid1 = true;
                            const len0 = data6.length;
                            for (let i0 = 0; i0 < len0; i0++) {
                              const _errs14 = errors;
                              if (typeof data6[i0] !== 'string') {
                                validate10.errors = [
                                  {
                                    instancePath: instancePath + '/required/' + i0,
                                    schemaPath: '#/properties/required/items/type',
                                    keyword: 'type',
                                    params: { type: 'string' },
                                    message: 'must be string',
                                  },
                                ];
                                return false;
                              }
                              var valid1 = _errs14 === errors;
                              if (!valid1) {
                                break;
                              }
                            }
                          } else {
                            validate10.errors = [
                              {
                                instancePath: instancePath + '/required',
                                schemaPath: '#/properties/required/type',
                                keyword: 'type',
                                params: { type: 'array' },
                                message: 'must be array',
                              },
                            ];
                            return false;
                          }
                        }
                        var valid0 = _errs12 === errors;
                      } else {
                        var valid0 = true;
                      }
                      if (valid0) {
                        if (data.defaults !== undefined) {
                          let data8 = data.defaults;
                          const _errs16 = errors;
                          const _errs17 = errors;
                          if (errors === _errs17) {
                            if (data8 && typeof data8 == 'object' && !Array.isArray(data8)) {
                              const _errs19 = errors;
                              for (const key1 in data8) {
                                if (!func2.call(schema12.properties, key1)) {
                                  let data9 = data8[key1];
                                  const _errs20 = errors;
                                  if (
                                    typeof data9 !== 'string' &&
                                    !(typeof data9 == 'number') &&
                                    typeof data9 !== 'boolean' &&
                                    data9 !== null
                                  ) {
                                    validate10.errors = [
                                      {
                                        instancePath:
                                          instancePath + '/defaults/' + key1.replace(/~/g, '~0').replace(/\//g, '~1'),
                                        schemaPath: '#/definitions/conditions/additionalProperties/type',
                                        keyword: 'type',
                                        params: { type: schema12.additionalProperties.type },
                                        message: 'must be string,number,boolean,null',
                                      },
                                    ];
                                    return false;
                                  }
                                  var valid3 = _errs20 === errors;
                                  if (!valid3) {
                                    break;
                                  }
                                }
                              }
                              if (_errs19 === errors) {
                                if (data8.preparation !== undefined) {
                                  const _errs22 = errors;
                                  if (typeof data8.preparation !== 'string') {
                                    validate10.errors = [
                                      {
                                        instancePath: instancePath + '/defaults/preparation',
                                        schemaPath: '#/definitions/conditions/properties/preparation/type',
                                        keyword: 'type',
                                        params: { type: 'string' },
                                        message: 'must be string',
                                      },
                                    ];
                                    return false;
                                  }
                                  var valid4 = _errs22 === errors;
                                } else {
                                  var valid4 = true;
                                }
                                if (valid4) {
                                  if (data8.intensity !== undefined) {
                                    const _errs24 = errors;
                                    if (!(typeof data8.intensity == 'number')) {
                                      validate10.errors = [
                                        {
                                          instancePath: instancePath + '/defaults/intensity',
                                          schemaPath: '#/definitions/conditions/properties/intensity/type',
                                          keyword: 'type',
                                          params: { type: 'number' },
                                          message: 'must be number',
                                        },
                                      ];
                                      return false;
                                    }
                                    var valid4 = _errs24 === errors;
                                  } else {
                                    var valid4 = true;
                                  }
                                  if (valid4) {
                                    if (data8.intensityUnit !== undefined) {
                                      const _errs26 = errors;
                                      if (typeof data8.intensityUnit !== 'string') {
                                        validate10.errors = [
                                          {
                                            instancePath: instancePath + '/defaults/intensityUnit',
                                            schemaPath: '#/definitions/conditions/properties/intensityUnit/type',
                                            keyword: 'type',
                                            params: { type: 'string' },
                                            message: 'must be string',
                                          },
                                        ];
                                        return false;
                                      }
                                      var valid4 = _errs26 === errors;
                                    } else {
                                      var valid4 = true;
                                    }
                                    if (valid4) {
                                      if (data8.pulseWidthMs !== undefined) {
                                        let data13 = data8.pulseWidthMs;
                                        const _errs28 = errors;
                                        if (errors === _errs28) {
                                          if (typeof data13 == 'number') {
                                            if (data13 <= 0 || isNaN(data13)) {
                                              validate10.errors = [
                                                {
                                                  instancePath: instancePath + '/defaults/pulseWidthMs',
                                                  schemaPath:
                                                    '#/definitions/conditions/properties/pulseWidthMs/exclusiveMinimum',
                                                  keyword: 'exclusiveMinimum',
                                                  params: { comparison: '>', limit: 0 },
                                                  message: 'must be > 0',
                                                },
                                              ];
                                              return false;
                                            }
                                          } else {
                                            validate10.errors = [
                                              {
                                                instancePath: instancePath + '/defaults/pulseWidthMs',
                                                schemaPath: '#/definitions/conditions/properties/pulseWidthMs/type',
                                                keyword: 'type',
                                                params: { type: 'number' },
                                                message: 'must be number',
                                              },
                                            ];
                                            return false;
                                          }
                                        }
                                        var valid4 = _errs28 === errors;
                                      } else {
                                        var valid4 = true;
                                      }
                                      if (valid4) {
                                        if (data8.site !== undefined) {
                                          const _errs30 = errors;
                                          if (typeof data8.site !== 'string') {
                                            validate10.errors = [
                                              {
                                                instancePath: instancePath + '/defaults/site',
                                                schemaPath: '#/definitions/conditions/properties/site/type',
                                                keyword: 'type',
                                                params: { type: 'string' },
                                                message: 'must be string',
                                              },
                                            ];
                                            return false;
                                          }
                                          var valid4 = _errs30 === errors;
                                        } else {
                                          var valid4 = true;
                                        }
                                        if (valid4) {
                                          if (data8.distanceMm !== undefined) {
                                            let data15 = data8.distanceMm;
                                            const _errs32 = errors;
                                            if (errors === _errs32) {
                                              if (typeof data15 == 'number') {
                                                if (data15 <= 0 || isNaN(data15)) {
                                                  validate10.errors = [
                                                    {
                                                      instancePath: instancePath + '/defaults/distanceMm',
                                                      schemaPath:
                                                        '#/definitions/conditions/properties/distanceMm/exclusiveMinimum',
                                                      keyword: 'exclusiveMinimum',
                                                      params: { comparison: '>', limit: 0 },
                                                      message: 'must be > 0',
                                                    },
                                                  ];
                                                  return false;
                                                }
                                              } else {
                                                validate10.errors = [
                                                  {
                                                    instancePath: instancePath + '/defaults/distanceMm',
                                                    schemaPath: '#/definitions/conditions/properties/distanceMm/type',
                                                    keyword: 'type',
                                                    params: { type: 'number' },
                                                    message: 'must be number',
                                                  },
                                                ];
                                                return false;
                                              }
                                            }
                                            var valid4 = _errs32 === errors;
                                          } else {
                                            var valid4 = true;
                                          }
                                          if (valid4) {
                                            if (data8.drug !== undefined) {
                                              let data16 = data8.drug;
                                              const _errs34 = errors;
                                              if (typeof data16 !== 'string' && data16 !== null) {
                                                validate10.errors = [
                                                  {
                                                    instancePath: instancePath + '/defaults/drug',
                                                    schemaPath: '#/definitions/conditions/properties/drug/type',
                                                    keyword: 'type',
                                                    params: { type: schema12.properties.drug.type },
                                                    message: 'must be string,null',
                                                  },
                                                ];
                                                return false;
                                              }
                                              var valid4 = _errs34 === errors;
                                            } else {
                                              var valid4 = true;
                                            }
                                            if (valid4) {
                                              if (data8.concentration !== undefined) {
                                                let data17 = data8.concentration;
                                                const _errs36 = errors;
                                                if (errors === _errs36) {
                                                  if (typeof data17 == 'number') {
                                                    if (data17 < 0 || isNaN(data17)) {
                                                      validate10.errors = [
                                                        {
                                                          instancePath: instancePath + '/defaults/concentration',
                                                          schemaPath:
                                                            '#/definitions/conditions/properties/concentration/minimum',
                                                          keyword: 'minimum',
                                                          params: { comparison: '>=', limit: 0 },
                                                          message: 'must be >= 0',
                                                        },
                                                      ];
                                                      return false;
                                                    }
                                                  } else {
                                                    validate10.errors = [
                                                      {
                                                        instancePath: instancePath + '/defaults/concentration',
                                                        schemaPath:
                                                          '#/definitions/conditions/properties/concentration/type',
                                                        keyword: 'type',
                                                        params: { type: 'number' },
                                                        message: 'must be number',
                                                      },
                                                    ];
                                                    return false;
                                                  }
                                                }
                                                var valid4 = _errs36 === errors;
                                              } else {
                                                var valid4 = true;
                                              }
                                              if (valid4) {
                                                if (data8.concentrationUnit !== undefined) {
                                                  const _errs38 = errors;
                                                  if (typeof data8.concentrationUnit !== 'string') {
                                                    validate10.errors = [
                                                      {
                                                        instancePath: instancePath + '/defaults/concentrationUnit',
                                                        schemaPath:
                                                          '#/definitions/conditions/properties/concentrationUnit/type',
                                                        keyword: 'type',
                                                        params: { type: 'string' },
                                                        message: 'must be string',
                                                      },
                                                    ];
                                                    return false;
                                                  }
                                                  var valid4 = _errs38 === errors;
                                                } else {
                                                  var valid4 = true;
                                                }
                                                if (valid4) {
                                                  if (data8.temperatureC !== undefined) {
                                                    let data19 = data8.temperatureC;
                                                    const _errs40 = errors;
                                                    if (errors === _errs40) {
                                                      if (typeof data19 == 'number') {
                                                        if (data19 > 50 || isNaN(data19)) {
                                                          validate10.errors = [
                                                            {
                                                              instancePath: instancePath + '/defaults/temperatureC',
                                                              schemaPath:
                                                                '#/definitions/conditions/properties/temperatureC/maximum',
                                                              keyword: 'maximum',
                                                              params: { comparison: '<=', limit: 50 },
                                                              message: 'must be <= 50',
                                                            },
                                                          ];
                                                          return false;
                                                        } else {
                                                          if (data19 < -5 || isNaN(data19)) {
                                                            validate10.errors = [
                                                              {
                                                                instancePath: instancePath + '/defaults/temperatureC',
                                                                schemaPath:
                                                                  '#/definitions/conditions/properties/temperatureC/minimum',
                                                                keyword: 'minimum',
                                                                params: { comparison: '>=', limit: -5 },
                                                                message: 'must be >= -5',
                                                              },
                                                            ];
                                                            return false;
                                                          }
                                                        }
                                                      } else {
                                                        validate10.errors = [
                                                          {
                                                            instancePath: instancePath + '/defaults/temperatureC',
                                                            schemaPath:
                                                              '#/definitions/conditions/properties/temperatureC/type',
                                                            keyword: 'type',
                                                            params: { type: 'number' },
                                                            message: 'must be number',
                                                          },
                                                        ];
                                                        return false;
                                                      }
                                                    }
                                                    var valid4 = _errs40 === errors;
                                                  } else {
                                                    var valid4 = true;
                                                  }
                                                  if (valid4) {
                                                    if (data8.acquiredS !== undefined) {
                                                      const _errs42 = errors;
                                                      if (!(typeof data8.acquiredS == 'number')) {
                                                        validate10.errors = [
                                                          {
                                                            instancePath: instancePath + '/defaults/acquiredS',
                                                            schemaPath:
                                                              '#/definitions/conditions/properties/acquiredS/type',
                                                            keyword: 'type',
                                                            params: { type: 'number' },
                                                            message: 'must be number',
                                                          },
                                                        ];
                                                        return false;
                                                      }
                                                      var valid4 = _errs42 === errors;
                                                    } else {
                                                      var valid4 = true;
                                                    }
                                                    if (valid4) {
                                                      if (data8.repeat !== undefined) {
                                                        let data21 = data8.repeat;
                                                        const _errs44 = errors;
                                                        if (!(
                                                          typeof data21 == 'number' &&
                                                          !(data21 % 1) &&
                                                          !isNaN(data21)
                                                        )) {
                                                          validate10.errors = [
                                                            {
                                                              instancePath: instancePath + '/defaults/repeat',
                                                              schemaPath:
                                                                '#/definitions/conditions/properties/repeat/type',
                                                              keyword: 'type',
                                                              params: { type: 'integer' },
                                                              message: 'must be integer',
                                                            },
                                                          ];
                                                          return false;
                                                        }
                                                        if (errors === _errs44) {
                                                          if (typeof data21 == 'number') {
                                                            if (data21 < 0 || isNaN(data21)) {
                                                              validate10.errors = [
                                                                {
                                                                  instancePath: instancePath + '/defaults/repeat',
                                                                  schemaPath:
                                                                    '#/definitions/conditions/properties/repeat/minimum',
                                                                  keyword: 'minimum',
                                                                  params: { comparison: '>=', limit: 0 },
                                                                  message: 'must be >= 0',
                                                                },
                                                              ];
                                                              return false;
                                                            }
                                                          }
                                                        }
                                                        var valid4 = _errs44 === errors;
                                                      } else {
                                                        var valid4 = true;
                                                      }
                                                      if (valid4) {
                                                        if (data8.polarity !== undefined) {
                                                          let data22 = data8.polarity;
                                                          const _errs46 = errors;
                                                          if (!(data22 === 1 || data22 === -1)) {
                                                            validate10.errors = [
                                                              {
                                                                instancePath: instancePath + '/defaults/polarity',
                                                                schemaPath:
                                                                  '#/definitions/conditions/properties/polarity/enum',
                                                                keyword: 'enum',
                                                                params: {
                                                                  allowedValues: schema12.properties.polarity.enum,
                                                                },
                                                                message: 'must be equal to one of the allowed values',
                                                              },
                                                            ];
                                                            return false;
                                                          }
                                                          var valid4 = _errs46 === errors;
                                                        } else {
                                                          var valid4 = true;
                                                        }
                                                        if (valid4) {
                                                          if (data8.epoch !== undefined) {
                                                            const _errs47 = errors;
                                                            if (typeof data8.epoch !== 'string') {
                                                              validate10.errors = [
                                                                {
                                                                  instancePath: instancePath + '/defaults/epoch',
                                                                  schemaPath:
                                                                    '#/definitions/conditions/properties/epoch/type',
                                                                  keyword: 'type',
                                                                  params: { type: 'string' },
                                                                  message: 'must be string',
                                                                },
                                                              ];
                                                              return false;
                                                            }
                                                            var valid4 = _errs47 === errors;
                                                          } else {
                                                            var valid4 = true;
                                                          }
                                                          if (valid4) {
                                                            if (data8.series !== undefined) {
                                                              let data24 = data8.series;
                                                              const _errs49 = errors;
                                                              if (!(
                                                                data24 === 'intensity' ||
                                                                data24 === 'distance' ||
                                                                data24 === 'dose' ||
                                                                data24 === 'temperature' ||
                                                                data24 === 'pulse-width' ||
                                                                data24 === 'paired-pulse' ||
                                                                data24 === 'train' ||
                                                                data24 === null
                                                              )) {
                                                                validate10.errors = [
                                                                  {
                                                                    instancePath: instancePath + '/defaults/series',
                                                                    schemaPath:
                                                                      '#/definitions/conditions/properties/series/enum',
                                                                    keyword: 'enum',
                                                                    params: {
                                                                      allowedValues: schema12.properties.series.enum,
                                                                    },
                                                                    message:
                                                                      'must be equal to one of the allowed values',
                                                                  },
                                                                ];
                                                                return false;
                                                              }
                                                              var valid4 = _errs49 === errors;
                                                            } else {
                                                              var valid4 = true;
                                                            }
                                                          }
                                                        }
                                                      }
                                                    }
                                                  }
                                                }
                                              }
                                            }
                                          }
                                        }
                                      }
                                    }
                                  }
                                }
                              }
                            } else {
                              validate10.errors = [
                                {
                                  instancePath: instancePath + '/defaults',
                                  schemaPath: '#/definitions/conditions/type',
                                  keyword: 'type',
                                  params: { type: 'object' },
                                  message: 'must be object',
                                },
                              ];
                              return false;
                            }
                          }
                          var valid0 = _errs16 === errors;
                        } else {
                          var valid0 = true;
                        }
                        if (valid0) {
                          if (data.blinding !== undefined) {
                            let data25 = data.blinding;
                            const _errs50 = errors;
                            if (errors === _errs50) {
                              if (data25 && typeof data25 == 'object' && !Array.isArray(data25)) {
                                let missing1;
                                if (data25.coded === undefined && (missing1 = 'coded')) {
                                  validate10.errors = [
                                    {
                                      instancePath: instancePath + '/blinding',
                                      schemaPath: '#/properties/blinding/required',
                                      keyword: 'required',
                                      params: { missingProperty: missing1 },
                                      message: "must have required property '" + missing1 + "'",
                                    },
                                  ];
                                  return false;
                                } else {
                                  const _errs52 = errors;
                                  for (const key2 in data25) {
                                    if (!(key2 === 'coded' || key2 === 'condition')) {
                                      validate10.errors = [
                                        {
                                          instancePath: instancePath + '/blinding',
                                          schemaPath: '#/properties/blinding/additionalProperties',
                                          keyword: 'additionalProperties',
                                          params: { additionalProperty: key2 },
                                          message: 'must NOT have additional properties',
                                        },
                                      ];
                                      return false;
                                      break;
                                    }
                                  }
                                  if (_errs52 === errors) {
                                    if (data25.coded !== undefined) {
                                      const _errs53 = errors;
                                      if (typeof data25.coded !== 'boolean') {
                                        validate10.errors = [
                                          {
                                            instancePath: instancePath + '/blinding/coded',
                                            schemaPath: '#/properties/blinding/properties/coded/type',
                                            keyword: 'type',
                                            params: { type: 'boolean' },
                                            message: 'must be boolean',
                                          },
                                        ];
                                        return false;
                                      }
                                      var valid5 = _errs53 === errors;
                                    } else {
                                      var valid5 = true;
                                    }
                                    if (valid5) {
                                      if (data25.condition !== undefined) {
                                        let data27 = data25.condition;
                                        const _errs55 = errors;
                                        if (errors === _errs55) {
                                          if (typeof data27 === 'string') {
                                            if (func4(data27) < 1) {
                                              validate10.errors = [
                                                {
                                                  instancePath: instancePath + '/blinding/condition',
                                                  schemaPath: '#/properties/blinding/properties/condition/minLength',
                                                  keyword: 'minLength',
                                                  params: { limit: 1 },
                                                  message: 'must NOT have fewer than 1 characters',
                                                },
                                              ];
                                              return false;
                                            }
                                          } else {
                                            validate10.errors = [
                                              {
                                                instancePath: instancePath + '/blinding/condition',
                                                schemaPath: '#/properties/blinding/properties/condition/type',
                                                keyword: 'type',
                                                params: { type: 'string' },
                                                message: 'must be string',
                                              },
                                            ];
                                            return false;
                                          }
                                        }
                                        var valid5 = _errs55 === errors;
                                      } else {
                                        var valid5 = true;
                                      }
                                    }
                                  }
                                }
                              } else {
                                validate10.errors = [
                                  {
                                    instancePath: instancePath + '/blinding',
                                    schemaPath: '#/properties/blinding/type',
                                    keyword: 'type',
                                    params: { type: 'object' },
                                    message: 'must be object',
                                  },
                                ];
                                return false;
                              }
                            }
                            var valid0 = _errs50 === errors;
                          } else {
                            var valid0 = true;
                          }
                          if (valid0) {
                            if (data.analysis !== undefined) {
                              let data28 = data.analysis;
                              const _errs57 = errors;
                              if (errors === _errs57) {
                                if (data28 && typeof data28 == 'object' && !Array.isArray(data28)) {
                                  if (data28.baseline !== undefined) {
                                    const _errs59 = errors;
                                    var valid6 = _errs59 === errors;
                                  } else {
                                    var valid6 = true;
                                  }
                                  if (valid6) {
                                    if (data28.artifact !== undefined) {
                                      const _errs60 = errors;
                                      var valid6 = _errs60 === errors;
                                    } else {
                                      var valid6 = true;
                                    }
                                    if (valid6) {
                                      if (data28.hum !== undefined) {
                                        const _errs61 = errors;
                                        var valid6 = _errs61 === errors;
                                      } else {
                                        var valid6 = true;
                                      }
                                      if (valid6) {
                                        if (data28.filter !== undefined) {
                                          const _errs62 = errors;
                                          var valid6 = _errs62 === errors;
                                        } else {
                                          var valid6 = true;
                                        }
                                        if (valid6) {
                                          if (data28.averageRepeats !== undefined) {
                                            const _errs63 = errors;
                                            if (typeof data28.averageRepeats !== 'boolean') {
                                              validate10.errors = [
                                                {
                                                  instancePath: instancePath + '/analysis/averageRepeats',
                                                  schemaPath: '#/properties/analysis/properties/averageRepeats/type',
                                                  keyword: 'type',
                                                  params: { type: 'boolean' },
                                                  message: 'must be boolean',
                                                },
                                              ];
                                              return false;
                                            }
                                            var valid6 = _errs63 === errors;
                                          } else {
                                            var valid6 = true;
                                          }
                                          if (valid6) {
                                            if (data28.poolSites !== undefined) {
                                              const _errs65 = errors;
                                              if (typeof data28.poolSites !== 'boolean') {
                                                validate10.errors = [
                                                  {
                                                    instancePath: instancePath + '/analysis/poolSites',
                                                    schemaPath: '#/properties/analysis/properties/poolSites/type',
                                                    keyword: 'type',
                                                    params: { type: 'boolean' },
                                                    message: 'must be boolean',
                                                  },
                                                ];
                                                return false;
                                              }
                                              var valid6 = _errs65 === errors;
                                            } else {
                                              var valid6 = true;
                                            }
                                            if (valid6) {
                                              if (data28.components !== undefined) {
                                                const _errs67 = errors;
                                                var valid6 = _errs67 === errors;
                                              } else {
                                                var valid6 = true;
                                              }
                                              if (valid6) {
                                                if (data28.doseResponse !== undefined) {
                                                  const _errs68 = errors;
                                                  var valid6 = _errs68 === errors;
                                                } else {
                                                  var valid6 = true;
                                                }
                                                if (valid6) {
                                                  if (data28.recruitment !== undefined) {
                                                    const _errs69 = errors;
                                                    var valid6 = _errs69 === errors;
                                                  } else {
                                                    var valid6 = true;
                                                  }
                                                  if (valid6) {
                                                    if (data28.strengthDuration !== undefined) {
                                                      const _errs70 = errors;
                                                      var valid6 = _errs70 === errors;
                                                    } else {
                                                      var valid6 = true;
                                                    }
                                                    if (valid6) {
                                                      if (data28.temperature !== undefined) {
                                                        const _errs71 = errors;
                                                        var valid6 = _errs71 === errors;
                                                      } else {
                                                        var valid6 = true;
                                                      }
                                                      if (valid6) {
                                                        if (data28.qc !== undefined) {
                                                          const _errs72 = errors;
                                                          var valid6 = _errs72 === errors;
                                                        } else {
                                                          var valid6 = true;
                                                        }
                                                        if (valid6) {
                                                          if (data28.reject !== undefined) {
                                                            const _errs73 = errors;
                                                            var valid6 = _errs73 === errors;
                                                          } else {
                                                            var valid6 = true;
                                                          }
                                                          if (valid6) {
                                                            if (data28.pairedPulse !== undefined) {
                                                              const _errs74 = errors;
                                                              var valid6 = _errs74 === errors;
                                                            } else {
                                                              var valid6 = true;
                                                            }
                                                            if (valid6) {
                                                              if (data28.trains !== undefined) {
                                                                const _errs75 = errors;
                                                                var valid6 = _errs75 === errors;
                                                              } else {
                                                                var valid6 = true;
                                                              }
                                                              if (valid6) {
                                                                if (data28.groups !== undefined) {
                                                                  const _errs76 = errors;
                                                                  var valid6 = _errs76 === errors;
                                                                } else {
                                                                  var valid6 = true;
                                                                }
                                                                if (valid6) {
                                                                  if (data28.mixed !== undefined) {
                                                                    const _errs77 = errors;
                                                                    var valid6 = _errs77 === errors;
                                                                  } else {
                                                                    var valid6 = true;
                                                                  }
                                                                  if (valid6) {
                                                                    if (data28.velocityDistribution !== undefined) {
                                                                      const _errs78 = errors;
                                                                      var valid6 = _errs78 === errors;
                                                                    } else {
                                                                      var valid6 = true;
                                                                    }
                                                                  }
                                                                }
                                                              }
                                                            }
                                                          }
                                                        }
                                                      }
                                                    }
                                                  }
                                                }
                                              }
                                            }
                                          }
                                        }
                                      }
                                    }
                                  }
                                } else {
                                  validate10.errors = [
                                    {
                                      instancePath: instancePath + '/analysis',
                                      schemaPath: '#/properties/analysis/type',
                                      keyword: 'type',
                                      params: { type: 'object' },
                                      message: 'must be object',
                                    },
                                  ];
                                  return false;
                                }
                              }
                              var valid0 = _errs57 === errors;
                            } else {
                              var valid0 = true;
                            }
                            if (valid0) {
                              if (data.files !== undefined) {
                                let data47 = data.files;
                                const _errs79 = errors;
                                if (errors === _errs79) {
                                  if (Array.isArray(data47)) {
                                    if (data47.length < 1) {
                                      validate10.errors = [
                                        {
                                          instancePath: instancePath + '/files',
                                          schemaPath: '#/properties/files/minItems',
                                          keyword: 'minItems',
                                          params: { limit: 1 },
                                          message: 'must NOT have fewer than 1 items',
                                        },
                                      ];
                                      return false;
                                    } else {
                                      var valid7 = true;
                                      const len1 = data47.length;
                                      for (let i1 = 0; i1 < len1; i1++) {
                                        let data48 = data47[i1];
                                        const _errs81 = errors;
                                        if (errors === _errs81) {
                                          if (data48 && typeof data48 == 'object' && !Array.isArray(data48)) {
                                            let missing2;
                                            if (data48.path === undefined && (missing2 = 'path')) {
                                              validate10.errors = [
                                                {
                                                  instancePath: instancePath + '/files/' + i1,
                                                  schemaPath: '#/properties/files/items/required',
                                                  keyword: 'required',
                                                  params: { missingProperty: missing2 },
                                                  message: "must have required property '" + missing2 + "'",
                                                },
                                              ];
                                              return false;
                                            } else {
                                              const _errs83 = errors;
                                              for (const key3 in data48) {
                                                if (!(
                                                  key3 === 'path' ||
                                                  key3 === 'format' ||
                                                  key3 === 'options' ||
                                                  key3 === 'conditions' ||
                                                  key3 === 'sweeps'
                                                )) {
                                                  validate10.errors = [
                                                    {
                                                      instancePath: instancePath + '/files/' + i1,
                                                      schemaPath: '#/properties/files/items/additionalProperties',
                                                      keyword: 'additionalProperties',
                                                      params: { additionalProperty: key3 },
                                                      message: 'must NOT have additional properties',
                                                    },
                                                  ];
                                                  return false;
                                                  break;
                                                }
                                              }
                                              if (_errs83 === errors) {
                                                if (data48.path !== undefined) {
                                                  let data49 = data48.path;
                                                  const _errs84 = errors;
                                                  if (errors === _errs84) {
                                                    if (typeof data49 === 'string') {
                                                      if (func4(data49) < 1) {
                                                        validate10.errors = [
                                                          {
                                                            instancePath: instancePath + '/files/' + i1 + '/path',
                                                            schemaPath:
                                                              '#/properties/files/items/properties/path/minLength',
                                                            keyword: 'minLength',
                                                            params: { limit: 1 },
                                                            message: 'must NOT have fewer than 1 characters',
                                                          },
                                                        ];
                                                        return false;
                                                      }
                                                    } else {
                                                      validate10.errors = [
                                                        {
                                                          instancePath: instancePath + '/files/' + i1 + '/path',
                                                          schemaPath: '#/properties/files/items/properties/path/type',
                                                          keyword: 'type',
                                                          params: { type: 'string' },
                                                          message: 'must be string',
                                                        },
                                                      ];
                                                      return false;
                                                    }
                                                  }
                                                  var valid8 = _errs84 === errors;
                                                } else {
                                                  var valid8 = true;
                                                }
                                                if (valid8) {
                                                  if (data48.format !== undefined) {
                                                    let data50 = data48.format;
                                                    const _errs86 = errors;
                                                    if (!(
                                                      data50 === 'delimited' ||
                                                      data50 === 'binary' ||
                                                      data50 === 'nwb'
                                                    )) {
                                                      validate10.errors = [
                                                        {
                                                          instancePath: instancePath + '/files/' + i1 + '/format',
                                                          schemaPath: '#/properties/files/items/properties/format/enum',
                                                          keyword: 'enum',
                                                          params: {
                                                            allowedValues:
                                                              schema11.properties.files.items.properties.format.enum,
                                                          },
                                                          message: 'must be equal to one of the allowed values',
                                                        },
                                                      ];
                                                      return false;
                                                    }
                                                    var valid8 = _errs86 === errors;
                                                  } else {
                                                    var valid8 = true;
                                                  }
                                                  if (valid8) {
                                                    if (data48.options !== undefined) {
                                                      let data51 = data48.options;
                                                      const _errs87 = errors;
                                                      if (!(
                                                        data51 &&
                                                        typeof data51 == 'object' &&
                                                        !Array.isArray(data51)
                                                      )) {
                                                        validate10.errors = [
                                                          {
                                                            instancePath: instancePath + '/files/' + i1 + '/options',
                                                            schemaPath:
                                                              '#/properties/files/items/properties/options/type',
                                                            keyword: 'type',
                                                            params: { type: 'object' },
                                                            message: 'must be object',
                                                          },
                                                        ];
                                                        return false;
                                                      }
                                                      var valid8 = _errs87 === errors;
                                                    } else {
                                                      var valid8 = true;
                                                    }
                                                    if (valid8) {
                                                      if (data48.conditions !== undefined) {
                                                        let data52 = data48.conditions;
                                                        const _errs89 = errors;
                                                        const _errs90 = errors;
                                                        if (errors === _errs90) {
                                                          if (
                                                            data52 &&
                                                            typeof data52 == 'object' &&
                                                            !Array.isArray(data52)
                                                          ) {
                                                            const _errs92 = errors;
                                                            for (const key4 in data52) {
                                                              if (!func2.call(schema12.properties, key4)) {
                                                                let data53 = data52[key4];
                                                                const _errs93 = errors;
                                                                if (
                                                                  typeof data53 !== 'string' &&
                                                                  !(typeof data53 == 'number') &&
                                                                  typeof data53 !== 'boolean' &&
                                                                  data53 !== null
                                                                ) {
                                                                  validate10.errors = [
                                                                    {
                                                                      instancePath:
                                                                        instancePath +
                                                                        '/files/' +
                                                                        i1 +
                                                                        '/conditions/' +
                                                                        key4.replace(/~/g, '~0').replace(/\//g, '~1'),
                                                                      schemaPath:
                                                                        '#/definitions/conditions/additionalProperties/type',
                                                                      keyword: 'type',
                                                                      params: {
                                                                        type: schema12.additionalProperties.type,
                                                                      },
                                                                      message: 'must be string,number,boolean,null',
                                                                    },
                                                                  ];
                                                                  return false;
                                                                }
                                                                var valid10 = _errs93 === errors;
                                                                if (!valid10) {
                                                                  break;
                                                                }
                                                              }
                                                            }
                                                            if (_errs92 === errors) {
                                                              if (data52.preparation !== undefined) {
                                                                const _errs95 = errors;
                                                                if (typeof data52.preparation !== 'string') {
                                                                  validate10.errors = [
                                                                    {
                                                                      instancePath:
                                                                        instancePath +
                                                                        '/files/' +
                                                                        i1 +
                                                                        '/conditions/preparation',
                                                                      schemaPath:
                                                                        '#/definitions/conditions/properties/preparation/type',
                                                                      keyword: 'type',
                                                                      params: { type: 'string' },
                                                                      message: 'must be string',
                                                                    },
                                                                  ];
                                                                  return false;
                                                                }
                                                                var valid11 = _errs95 === errors;
                                                              } else {
                                                                var valid11 = true;
                                                              }
                                                              if (valid11) {
                                                                if (data52.intensity !== undefined) {
                                                                  const _errs97 = errors;
                                                                  if (!(typeof data52.intensity == 'number')) {
                                                                    validate10.errors = [
                                                                      {
                                                                        instancePath:
                                                                          instancePath +
                                                                          '/files/' +
                                                                          i1 +
                                                                          '/conditions/intensity',
                                                                        schemaPath:
                                                                          '#/definitions/conditions/properties/intensity/type',
                                                                        keyword: 'type',
                                                                        params: { type: 'number' },
                                                                        message: 'must be number',
                                                                      },
                                                                    ];
                                                                    return false;
                                                                  }
                                                                  var valid11 = _errs97 === errors;
                                                                } else {
                                                                  var valid11 = true;
                                                                }
                                                                if (valid11) {
                                                                  if (data52.intensityUnit !== undefined) {
                                                                    const _errs99 = errors;
                                                                    if (typeof data52.intensityUnit !== 'string') {
                                                                      validate10.errors = [
                                                                        {
                                                                          instancePath:
                                                                            instancePath +
                                                                            '/files/' +
                                                                            i1 +
                                                                            '/conditions/intensityUnit',
                                                                          schemaPath:
                                                                            '#/definitions/conditions/properties/intensityUnit/type',
                                                                          keyword: 'type',
                                                                          params: { type: 'string' },
                                                                          message: 'must be string',
                                                                        },
                                                                      ];
                                                                      return false;
                                                                    }
                                                                    var valid11 = _errs99 === errors;
                                                                  } else {
                                                                    var valid11 = true;
                                                                  }
                                                                  if (valid11) {
                                                                    if (data52.pulseWidthMs !== undefined) {
                                                                      let data57 = data52.pulseWidthMs;
                                                                      const _errs101 = errors;
                                                                      if (errors === _errs101) {
                                                                        if (typeof data57 == 'number') {
                                                                          if (data57 <= 0 || isNaN(data57)) {
                                                                            validate10.errors = [
                                                                              {
                                                                                instancePath:
                                                                                  instancePath +
                                                                                  '/files/' +
                                                                                  i1 +
                                                                                  '/conditions/pulseWidthMs',
                                                                                schemaPath:
                                                                                  '#/definitions/conditions/properties/pulseWidthMs/exclusiveMinimum',
                                                                                keyword: 'exclusiveMinimum',
                                                                                params: { comparison: '>', limit: 0 },
                                                                                message: 'must be > 0',
                                                                              },
                                                                            ];
                                                                            return false;
                                                                          }
                                                                        } else {
                                                                          validate10.errors = [
                                                                            {
                                                                              instancePath:
                                                                                instancePath +
                                                                                '/files/' +
                                                                                i1 +
                                                                                '/conditions/pulseWidthMs',
                                                                              schemaPath:
                                                                                '#/definitions/conditions/properties/pulseWidthMs/type',
                                                                              keyword: 'type',
                                                                              params: { type: 'number' },
                                                                              message: 'must be number',
                                                                            },
                                                                          ];
                                                                          return false;
                                                                        }
                                                                      }
                                                                      var valid11 = _errs101 === errors;
                                                                    } else {
                                                                      var valid11 = true;
                                                                    }
                                                                    if (valid11) {
                                                                      if (data52.site !== undefined) {
                                                                        const _errs103 = errors;
                                                                        if (typeof data52.site !== 'string') {
                                                                          validate10.errors = [
                                                                            {
                                                                              instancePath:
                                                                                instancePath +
                                                                                '/files/' +
                                                                                i1 +
                                                                                '/conditions/site',
                                                                              schemaPath:
                                                                                '#/definitions/conditions/properties/site/type',
                                                                              keyword: 'type',
                                                                              params: { type: 'string' },
                                                                              message: 'must be string',
                                                                            },
                                                                          ];
                                                                          return false;
                                                                        }
                                                                        var valid11 = _errs103 === errors;
                                                                      } else {
                                                                        var valid11 = true;
                                                                      }
                                                                      if (valid11) {
                                                                        if (data52.distanceMm !== undefined) {
                                                                          let data59 = data52.distanceMm;
                                                                          const _errs105 = errors;
                                                                          if (errors === _errs105) {
                                                                            if (typeof data59 == 'number') {
                                                                              if (data59 <= 0 || isNaN(data59)) {
                                                                                validate10.errors = [
                                                                                  {
                                                                                    instancePath:
                                                                                      instancePath +
                                                                                      '/files/' +
                                                                                      i1 +
                                                                                      '/conditions/distanceMm',
                                                                                    schemaPath:
                                                                                      '#/definitions/conditions/properties/distanceMm/exclusiveMinimum',
                                                                                    keyword: 'exclusiveMinimum',
                                                                                    params: {
                                                                                      comparison: '>',
                                                                                      limit: 0,
                                                                                    },
                                                                                    message: 'must be > 0',
                                                                                  },
                                                                                ];
                                                                                return false;
                                                                              }
                                                                            } else {
                                                                              validate10.errors = [
                                                                                {
                                                                                  instancePath:
                                                                                    instancePath +
                                                                                    '/files/' +
                                                                                    i1 +
                                                                                    '/conditions/distanceMm',
                                                                                  schemaPath:
                                                                                    '#/definitions/conditions/properties/distanceMm/type',
                                                                                  keyword: 'type',
                                                                                  params: { type: 'number' },
                                                                                  message: 'must be number',
                                                                                },
                                                                              ];
                                                                              return false;
                                                                            }
                                                                          }
                                                                          var valid11 = _errs105 === errors;
                                                                        } else {
                                                                          var valid11 = true;
                                                                        }
                                                                        if (valid11) {
                                                                          if (data52.drug !== undefined) {
                                                                            let data60 = data52.drug;
                                                                            const _errs107 = errors;
                                                                            if (
                                                                              typeof data60 !== 'string' &&
                                                                              data60 !== null
                                                                            ) {
                                                                              validate10.errors = [
                                                                                {
                                                                                  instancePath:
                                                                                    instancePath +
                                                                                    '/files/' +
                                                                                    i1 +
                                                                                    '/conditions/drug',
                                                                                  schemaPath:
                                                                                    '#/definitions/conditions/properties/drug/type',
                                                                                  keyword: 'type',
                                                                                  params: {
                                                                                    type: schema12.properties.drug.type,
                                                                                  },
                                                                                  message: 'must be string,null',
                                                                                },
                                                                              ];
                                                                              return false;
                                                                            }
                                                                            var valid11 = _errs107 === errors;
                                                                          } else {
                                                                            var valid11 = true;
                                                                          }
                                                                          if (valid11) {
                                                                            if (data52.concentration !== undefined) {
                                                                              let data61 = data52.concentration;
                                                                              const _errs109 = errors;
                                                                              if (errors === _errs109) {
                                                                                if (typeof data61 == 'number') {
                                                                                  if (data61 < 0 || isNaN(data61)) {
                                                                                    validate10.errors = [
                                                                                      {
                                                                                        instancePath:
                                                                                          instancePath +
                                                                                          '/files/' +
                                                                                          i1 +
                                                                                          '/conditions/concentration',
                                                                                        schemaPath:
                                                                                          '#/definitions/conditions/properties/concentration/minimum',
                                                                                        keyword: 'minimum',
                                                                                        params: {
                                                                                          comparison: '>=',
                                                                                          limit: 0,
                                                                                        },
                                                                                        message: 'must be >= 0',
                                                                                      },
                                                                                    ];
                                                                                    return false;
                                                                                  }
                                                                                } else {
                                                                                  validate10.errors = [
                                                                                    {
                                                                                      instancePath:
                                                                                        instancePath +
                                                                                        '/files/' +
                                                                                        i1 +
                                                                                        '/conditions/concentration',
                                                                                      schemaPath:
                                                                                        '#/definitions/conditions/properties/concentration/type',
                                                                                      keyword: 'type',
                                                                                      params: { type: 'number' },
                                                                                      message: 'must be number',
                                                                                    },
                                                                                  ];
                                                                                  return false;
                                                                                }
                                                                              }
                                                                              var valid11 = _errs109 === errors;
                                                                            } else {
                                                                              var valid11 = true;
                                                                            }
                                                                            if (valid11) {
                                                                              if (
                                                                                data52.concentrationUnit !== undefined
                                                                              ) {
                                                                                const _errs111 = errors;
                                                                                if (
                                                                                  typeof data52.concentrationUnit !==
                                                                                  'string'
                                                                                ) {
                                                                                  validate10.errors = [
                                                                                    {
                                                                                      instancePath:
                                                                                        instancePath +
                                                                                        '/files/' +
                                                                                        i1 +
                                                                                        '/conditions/concentrationUnit',
                                                                                      schemaPath:
                                                                                        '#/definitions/conditions/properties/concentrationUnit/type',
                                                                                      keyword: 'type',
                                                                                      params: { type: 'string' },
                                                                                      message: 'must be string',
                                                                                    },
                                                                                  ];
                                                                                  return false;
                                                                                }
                                                                                var valid11 = _errs111 === errors;
                                                                              } else {
                                                                                var valid11 = true;
                                                                              }
                                                                              if (valid11) {
                                                                                if (data52.temperatureC !== undefined) {
                                                                                  let data63 = data52.temperatureC;
                                                                                  const _errs113 = errors;
                                                                                  if (errors === _errs113) {
                                                                                    if (typeof data63 == 'number') {
                                                                                      if (
                                                                                        data63 > 50 ||
                                                                                        isNaN(data63)
                                                                                      ) {
                                                                                        validate10.errors = [
                                                                                          {
                                                                                            instancePath:
                                                                                              instancePath +
                                                                                              '/files/' +
                                                                                              i1 +
                                                                                              '/conditions/temperatureC',
                                                                                            schemaPath:
                                                                                              '#/definitions/conditions/properties/temperatureC/maximum',
                                                                                            keyword: 'maximum',
                                                                                            params: {
                                                                                              comparison: '<=',
                                                                                              limit: 50,
                                                                                            },
                                                                                            message: 'must be <= 50',
                                                                                          },
                                                                                        ];
                                                                                        return false;
                                                                                      } else {
                                                                                        if (
                                                                                          data63 < -5 ||
                                                                                          isNaN(data63)
                                                                                        ) {
                                                                                          validate10.errors = [
                                                                                            {
                                                                                              instancePath:
                                                                                                instancePath +
                                                                                                '/files/' +
                                                                                                i1 +
                                                                                                '/conditions/temperatureC',
                                                                                              schemaPath:
                                                                                                '#/definitions/conditions/properties/temperatureC/minimum',
                                                                                              keyword: 'minimum',
                                                                                              params: {
                                                                                                comparison: '>=',
                                                                                                limit: -5,
                                                                                              },
                                                                                              message: 'must be >= -5',
                                                                                            },
                                                                                          ];
                                                                                          return false;
                                                                                        }
                                                                                      }
                                                                                    } else {
                                                                                      validate10.errors = [
                                                                                        {
                                                                                          instancePath:
                                                                                            instancePath +
                                                                                            '/files/' +
                                                                                            i1 +
                                                                                            '/conditions/temperatureC',
                                                                                          schemaPath:
                                                                                            '#/definitions/conditions/properties/temperatureC/type',
                                                                                          keyword: 'type',
                                                                                          params: { type: 'number' },
                                                                                          message: 'must be number',
                                                                                        },
                                                                                      ];
                                                                                      return false;
                                                                                    }
                                                                                  }
                                                                                  var valid11 = _errs113 === errors;
                                                                                } else {
                                                                                  var valid11 = true;
                                                                                }
                                                                                if (valid11) {
                                                                                  if (data52.acquiredS !== undefined) {
                                                                                    const _errs115 = errors;
                                                                                    if (
                                                                                      !(
                                                                                        typeof data52.acquiredS ==
                                                                                        'number'
                                                                                      )
                                                                                    ) {
                                                                                      validate10.errors = [
                                                                                        {
                                                                                          instancePath:
                                                                                            instancePath +
                                                                                            '/files/' +
                                                                                            i1 +
                                                                                            '/conditions/acquiredS',
                                                                                          schemaPath:
                                                                                            '#/definitions/conditions/properties/acquiredS/type',
                                                                                          keyword: 'type',
                                                                                          params: { type: 'number' },
                                                                                          message: 'must be number',
                                                                                        },
                                                                                      ];
                                                                                      return false;
                                                                                    }
                                                                                    var valid11 = _errs115 === errors;
                                                                                  } else {
                                                                                    var valid11 = true;
                                                                                  }
                                                                                  if (valid11) {
                                                                                    if (data52.repeat !== undefined) {
                                                                                      let data65 = data52.repeat;
                                                                                      const _errs117 = errors;
                                                                                      if (!(
                                                                                        typeof data65 == 'number' &&
                                                                                        !(data65 % 1) &&
                                                                                        !isNaN(data65)
                                                                                      )) {
                                                                                        validate10.errors = [
                                                                                          {
                                                                                            instancePath:
                                                                                              instancePath +
                                                                                              '/files/' +
                                                                                              i1 +
                                                                                              '/conditions/repeat',
                                                                                            schemaPath:
                                                                                              '#/definitions/conditions/properties/repeat/type',
                                                                                            keyword: 'type',
                                                                                            params: { type: 'integer' },
                                                                                            message: 'must be integer',
                                                                                          },
                                                                                        ];
                                                                                        return false;
                                                                                      }
                                                                                      if (errors === _errs117) {
                                                                                        if (typeof data65 == 'number') {
                                                                                          if (
                                                                                            data65 < 0 ||
                                                                                            isNaN(data65)
                                                                                          ) {
                                                                                            validate10.errors = [
                                                                                              {
                                                                                                instancePath:
                                                                                                  instancePath +
                                                                                                  '/files/' +
                                                                                                  i1 +
                                                                                                  '/conditions/repeat',
                                                                                                schemaPath:
                                                                                                  '#/definitions/conditions/properties/repeat/minimum',
                                                                                                keyword: 'minimum',
                                                                                                params: {
                                                                                                  comparison: '>=',
                                                                                                  limit: 0,
                                                                                                },
                                                                                                message: 'must be >= 0',
                                                                                              },
                                                                                            ];
                                                                                            return false;
                                                                                          }
                                                                                        }
                                                                                      }
                                                                                      var valid11 = _errs117 === errors;
                                                                                    } else {
                                                                                      var valid11 = true;
                                                                                    }
                                                                                    if (valid11) {
                                                                                      if (
                                                                                        data52.polarity !== undefined
                                                                                      ) {
                                                                                        let data66 = data52.polarity;
                                                                                        const _errs119 = errors;
                                                                                        if (!(
                                                                                          data66 === 1 || data66 === -1
                                                                                        )) {
                                                                                          validate10.errors = [
                                                                                            {
                                                                                              instancePath:
                                                                                                instancePath +
                                                                                                '/files/' +
                                                                                                i1 +
                                                                                                '/conditions/polarity',
                                                                                              schemaPath:
                                                                                                '#/definitions/conditions/properties/polarity/enum',
                                                                                              keyword: 'enum',
                                                                                              params: {
                                                                                                allowedValues:
                                                                                                  schema12.properties
                                                                                                    .polarity.enum,
                                                                                              },
                                                                                              message:
                                                                                                'must be equal to one of the allowed values',
                                                                                            },
                                                                                          ];
                                                                                          return false;
                                                                                        }
                                                                                        var valid11 =
                                                                                          _errs119 === errors;
                                                                                      } else {
                                                                                        var valid11 = true;
                                                                                      }
                                                                                      if (valid11) {
                                                                                        if (
                                                                                          data52.epoch !== undefined
                                                                                        ) {
                                                                                          const _errs120 = errors;
                                                                                          if (
                                                                                            typeof data52.epoch !==
                                                                                            'string'
                                                                                          ) {
                                                                                            validate10.errors = [
                                                                                              {
                                                                                                instancePath:
                                                                                                  instancePath +
                                                                                                  '/files/' +
                                                                                                  i1 +
                                                                                                  '/conditions/epoch',
                                                                                                schemaPath:
                                                                                                  '#/definitions/conditions/properties/epoch/type',
                                                                                                keyword: 'type',
                                                                                                params: {
                                                                                                  type: 'string',
                                                                                                },
                                                                                                message:
                                                                                                  'must be string',
                                                                                              },
                                                                                            ];
                                                                                            return false;
                                                                                          }
                                                                                          var valid11 =
                                                                                            _errs120 === errors;
                                                                                        } else {
                                                                                          var valid11 = true;
                                                                                        }
                                                                                        if (valid11) {
                                                                                          if (
                                                                                            data52.series !== undefined
                                                                                          ) {
                                                                                            let data68 = data52.series;
                                                                                            const _errs122 = errors;
                                                                                            if (!(
                                                                                              data68 === 'intensity' ||
                                                                                              data68 === 'distance' ||
                                                                                              data68 === 'dose' ||
                                                                                              data68 ===
                                                                                                'temperature' ||
                                                                                              data68 ===
                                                                                                'pulse-width' ||
                                                                                              data68 ===
                                                                                                'paired-pulse' ||
                                                                                              data68 === 'train' ||
                                                                                              data68 === null
                                                                                            )) {
                                                                                              validate10.errors = [
                                                                                                {
                                                                                                  instancePath:
                                                                                                    instancePath +
                                                                                                    '/files/' +
                                                                                                    i1 +
                                                                                                    '/conditions/series',
                                                                                                  schemaPath:
                                                                                                    '#/definitions/conditions/properties/series/enum',
                                                                                                  keyword: 'enum',
                                                                                                  params: {
                                                                                                    allowedValues:
                                                                                                      schema12
                                                                                                        .properties
                                                                                                        .series.enum,
                                                                                                  },
                                                                                                  message:
                                                                                                    'must be equal to one of the allowed values',
                                                                                                },
                                                                                              ];
                                                                                              return false;
                                                                                            }
                                                                                            var valid11 =
                                                                                              _errs122 === errors;
                                                                                          } else {
                                                                                            var valid11 = true;
                                                                                          }
                                                                                        }
                                                                                      }
                                                                                    }
                                                                                  }
                                                                                }
                                                                              }
                                                                            }
                                                                          }
                                                                        }
                                                                      }
                                                                    }
                                                                  }
                                                                }
                                                              }
                                                            }
                                                          } else {
                                                            validate10.errors = [
                                                              {
                                                                instancePath:
                                                                  instancePath + '/files/' + i1 + '/conditions',
                                                                schemaPath: '#/definitions/conditions/type',
                                                                keyword: 'type',
                                                                params: { type: 'object' },
                                                                message: 'must be object',
                                                              },
                                                            ];
                                                            return false;
                                                          }
                                                        }
                                                        var valid8 = _errs89 === errors;
                                                      } else {
                                                        var valid8 = true;
                                                      }
                                                      if (valid8) {
                                                        if (data48.sweeps !== undefined) {
                                                          let data69 = data48.sweeps;
                                                          const _errs123 = errors;
                                                          if (errors === _errs123) {
                                                            if (Array.isArray(data69)) {
                                                              var valid12 = true;
                                                              const len2 = data69.length;
                                                              for (let i2 = 0; i2 < len2; i2++) {
                                                                let data70 = data69[i2];
                                                                const _errs125 = errors;
                                                                const _errs126 = errors;
                                                                if (errors === _errs126) {
                                                                  if (
                                                                    data70 &&
                                                                    typeof data70 == 'object' &&
                                                                    !Array.isArray(data70)
                                                                  ) {
                                                                    const _errs128 = errors;
                                                                    for (const key5 in data70) {
                                                                      if (!func2.call(schema12.properties, key5)) {
                                                                        let data71 = data70[key5];
                                                                        const _errs129 = errors;
                                                                        if (
                                                                          typeof data71 !== 'string' &&
                                                                          !(typeof data71 == 'number') &&
                                                                          typeof data71 !== 'boolean' &&
                                                                          data71 !== null
                                                                        ) {
                                                                          validate10.errors = [
                                                                            {
                                                                              instancePath:
                                                                                instancePath +
                                                                                '/files/' +
                                                                                i1 +
                                                                                '/sweeps/' +
                                                                                i2 +
                                                                                '/' +
                                                                                key5
                                                                                  .replace(/~/g, '~0')
                                                                                  .replace(/\//g, '~1'),
                                                                              schemaPath:
                                                                                '#/definitions/conditions/additionalProperties/type',
                                                                              keyword: 'type',
                                                                              params: {
                                                                                type: schema12.additionalProperties
                                                                                  .type,
                                                                              },
                                                                              message:
                                                                                'must be string,number,boolean,null',
                                                                            },
                                                                          ];
                                                                          return false;
                                                                        }
                                                                        var valid14 = _errs129 === errors;
                                                                        if (!valid14) {
                                                                          break;
                                                                        }
                                                                      }
                                                                    }
                                                                    if (_errs128 === errors) {
                                                                      if (data70.preparation !== undefined) {
                                                                        const _errs131 = errors;
                                                                        if (typeof data70.preparation !== 'string') {
                                                                          validate10.errors = [
                                                                            {
                                                                              instancePath:
                                                                                instancePath +
                                                                                '/files/' +
                                                                                i1 +
                                                                                '/sweeps/' +
                                                                                i2 +
                                                                                '/preparation',
                                                                              schemaPath:
                                                                                '#/definitions/conditions/properties/preparation/type',
                                                                              keyword: 'type',
                                                                              params: { type: 'string' },
                                                                              message: 'must be string',
                                                                            },
                                                                          ];
                                                                          return false;
                                                                        }
                                                                        var valid15 = _errs131 === errors;
                                                                      } else {
                                                                        var valid15 = true;
                                                                      }
                                                                      if (valid15) {
                                                                        if (data70.intensity !== undefined) {
                                                                          const _errs133 = errors;
                                                                          if (!(typeof data70.intensity == 'number')) {
                                                                            validate10.errors = [
                                                                              {
                                                                                instancePath:
                                                                                  instancePath +
                                                                                  '/files/' +
                                                                                  i1 +
                                                                                  '/sweeps/' +
                                                                                  i2 +
                                                                                  '/intensity',
                                                                                schemaPath:
                                                                                  '#/definitions/conditions/properties/intensity/type',
                                                                                keyword: 'type',
                                                                                params: { type: 'number' },
                                                                                message: 'must be number',
                                                                              },
                                                                            ];
                                                                            return false;
                                                                          }
                                                                          var valid15 = _errs133 === errors;
                                                                        } else {
                                                                          var valid15 = true;
                                                                        }
                                                                        if (valid15) {
                                                                          if (data70.intensityUnit !== undefined) {
                                                                            const _errs135 = errors;
                                                                            if (
                                                                              typeof data70.intensityUnit !== 'string'
                                                                            ) {
                                                                              validate10.errors = [
                                                                                {
                                                                                  instancePath:
                                                                                    instancePath +
                                                                                    '/files/' +
                                                                                    i1 +
                                                                                    '/sweeps/' +
                                                                                    i2 +
                                                                                    '/intensityUnit',
                                                                                  schemaPath:
                                                                                    '#/definitions/conditions/properties/intensityUnit/type',
                                                                                  keyword: 'type',
                                                                                  params: { type: 'string' },
                                                                                  message: 'must be string',
                                                                                },
                                                                              ];
                                                                              return false;
                                                                            }
                                                                            var valid15 = _errs135 === errors;
                                                                          } else {
                                                                            var valid15 = true;
                                                                          }
                                                                          if (valid15) {
                                                                            if (data70.pulseWidthMs !== undefined) {
                                                                              let data75 = data70.pulseWidthMs;
                                                                              const _errs137 = errors;
                                                                              if (errors === _errs137) {
                                                                                if (typeof data75 == 'number') {
                                                                                  if (data75 <= 0 || isNaN(data75)) {
                                                                                    validate10.errors = [
                                                                                      {
                                                                                        instancePath:
                                                                                          instancePath +
                                                                                          '/files/' +
                                                                                          i1 +
                                                                                          '/sweeps/' +
                                                                                          i2 +
                                                                                          '/pulseWidthMs',
                                                                                        schemaPath:
                                                                                          '#/definitions/conditions/properties/pulseWidthMs/exclusiveMinimum',
                                                                                        keyword: 'exclusiveMinimum',
                                                                                        params: {
                                                                                          comparison: '>',
                                                                                          limit: 0,
                                                                                        },
                                                                                        message: 'must be > 0',
                                                                                      },
                                                                                    ];
                                                                                    return false;
                                                                                  }
                                                                                } else {
                                                                                  validate10.errors = [
                                                                                    {
                                                                                      instancePath:
                                                                                        instancePath +
                                                                                        '/files/' +
                                                                                        i1 +
                                                                                        '/sweeps/' +
                                                                                        i2 +
                                                                                        '/pulseWidthMs',
                                                                                      schemaPath:
                                                                                        '#/definitions/conditions/properties/pulseWidthMs/type',
                                                                                      keyword: 'type',
                                                                                      params: { type: 'number' },
                                                                                      message: 'must be number',
                                                                                    },
                                                                                  ];
                                                                                  return false;
                                                                                }
                                                                              }
                                                                              var valid15 = _errs137 === errors;
                                                                            } else {
                                                                              var valid15 = true;
                                                                            }
                                                                            if (valid15) {
                                                                              if (data70.site !== undefined) {
                                                                                const _errs139 = errors;
                                                                                if (typeof data70.site !== 'string') {
                                                                                  validate10.errors = [
                                                                                    {
                                                                                      instancePath:
                                                                                        instancePath +
                                                                                        '/files/' +
                                                                                        i1 +
                                                                                        '/sweeps/' +
                                                                                        i2 +
                                                                                        '/site',
                                                                                      schemaPath:
                                                                                        '#/definitions/conditions/properties/site/type',
                                                                                      keyword: 'type',
                                                                                      params: { type: 'string' },
                                                                                      message: 'must be string',
                                                                                    },
                                                                                  ];
                                                                                  return false;
                                                                                }
                                                                                var valid15 = _errs139 === errors;
                                                                              } else {
                                                                                var valid15 = true;
                                                                              }
                                                                              if (valid15) {
                                                                                if (data70.distanceMm !== undefined) {
                                                                                  let data77 = data70.distanceMm;
                                                                                  const _errs141 = errors;
                                                                                  if (errors === _errs141) {
                                                                                    if (typeof data77 == 'number') {
                                                                                      if (
                                                                                        data77 <= 0 ||
                                                                                        isNaN(data77)
                                                                                      ) {
                                                                                        validate10.errors = [
                                                                                          {
                                                                                            instancePath:
                                                                                              instancePath +
                                                                                              '/files/' +
                                                                                              i1 +
                                                                                              '/sweeps/' +
                                                                                              i2 +
                                                                                              '/distanceMm',
                                                                                            schemaPath:
                                                                                              '#/definitions/conditions/properties/distanceMm/exclusiveMinimum',
                                                                                            keyword: 'exclusiveMinimum',
                                                                                            params: {
                                                                                              comparison: '>',
                                                                                              limit: 0,
                                                                                            },
                                                                                            message: 'must be > 0',
                                                                                          },
                                                                                        ];
                                                                                        return false;
                                                                                      }
                                                                                    } else {
                                                                                      validate10.errors = [
                                                                                        {
                                                                                          instancePath:
                                                                                            instancePath +
                                                                                            '/files/' +
                                                                                            i1 +
                                                                                            '/sweeps/' +
                                                                                            i2 +
                                                                                            '/distanceMm',
                                                                                          schemaPath:
                                                                                            '#/definitions/conditions/properties/distanceMm/type',
                                                                                          keyword: 'type',
                                                                                          params: { type: 'number' },
                                                                                          message: 'must be number',
                                                                                        },
                                                                                      ];
                                                                                      return false;
                                                                                    }
                                                                                  }
                                                                                  var valid15 = _errs141 === errors;
                                                                                } else {
                                                                                  var valid15 = true;
                                                                                }
                                                                                if (valid15) {
                                                                                  if (data70.drug !== undefined) {
                                                                                    let data78 = data70.drug;
                                                                                    const _errs143 = errors;
                                                                                    if (
                                                                                      typeof data78 !== 'string' &&
                                                                                      data78 !== null
                                                                                    ) {
                                                                                      validate10.errors = [
                                                                                        {
                                                                                          instancePath:
                                                                                            instancePath +
                                                                                            '/files/' +
                                                                                            i1 +
                                                                                            '/sweeps/' +
                                                                                            i2 +
                                                                                            '/drug',
                                                                                          schemaPath:
                                                                                            '#/definitions/conditions/properties/drug/type',
                                                                                          keyword: 'type',
                                                                                          params: {
                                                                                            type: schema12.properties
                                                                                              .drug.type,
                                                                                          },
                                                                                          message:
                                                                                            'must be string,null',
                                                                                        },
                                                                                      ];
                                                                                      return false;
                                                                                    }
                                                                                    var valid15 = _errs143 === errors;
                                                                                  } else {
                                                                                    var valid15 = true;
                                                                                  }
                                                                                  if (valid15) {
                                                                                    if (
                                                                                      data70.concentration !== undefined
                                                                                    ) {
                                                                                      let data79 = data70.concentration;
                                                                                      const _errs145 = errors;
                                                                                      if (errors === _errs145) {
                                                                                        if (typeof data79 == 'number') {
                                                                                          if (
                                                                                            data79 < 0 ||
                                                                                            isNaN(data79)
                                                                                          ) {
                                                                                            validate10.errors = [
                                                                                              {
                                                                                                instancePath:
                                                                                                  instancePath +
                                                                                                  '/files/' +
                                                                                                  i1 +
                                                                                                  '/sweeps/' +
                                                                                                  i2 +
                                                                                                  '/concentration',
                                                                                                schemaPath:
                                                                                                  '#/definitions/conditions/properties/concentration/minimum',
                                                                                                keyword: 'minimum',
                                                                                                params: {
                                                                                                  comparison: '>=',
                                                                                                  limit: 0,
                                                                                                },
                                                                                                message: 'must be >= 0',
                                                                                              },
                                                                                            ];
                                                                                            return false;
                                                                                          }
                                                                                        } else {
                                                                                          validate10.errors = [
                                                                                            {
                                                                                              instancePath:
                                                                                                instancePath +
                                                                                                '/files/' +
                                                                                                i1 +
                                                                                                '/sweeps/' +
                                                                                                i2 +
                                                                                                '/concentration',
                                                                                              schemaPath:
                                                                                                '#/definitions/conditions/properties/concentration/type',
                                                                                              keyword: 'type',
                                                                                              params: {
                                                                                                type: 'number',
                                                                                              },
                                                                                              message: 'must be number',
                                                                                            },
                                                                                          ];
                                                                                          return false;
                                                                                        }
                                                                                      }
                                                                                      var valid15 = _errs145 === errors;
                                                                                    } else {
                                                                                      var valid15 = true;
                                                                                    }
                                                                                    if (valid15) {
                                                                                      if (
                                                                                        data70.concentrationUnit !==
                                                                                        undefined
                                                                                      ) {
                                                                                        const _errs147 = errors;
                                                                                        if (
                                                                                          typeof data70.concentrationUnit !==
                                                                                          'string'
                                                                                        ) {
                                                                                          validate10.errors = [
                                                                                            {
                                                                                              instancePath:
                                                                                                instancePath +
                                                                                                '/files/' +
                                                                                                i1 +
                                                                                                '/sweeps/' +
                                                                                                i2 +
                                                                                                '/concentrationUnit',
                                                                                              schemaPath:
                                                                                                '#/definitions/conditions/properties/concentrationUnit/type',
                                                                                              keyword: 'type',
                                                                                              params: {
                                                                                                type: 'string',
                                                                                              },
                                                                                              message: 'must be string',
                                                                                            },
                                                                                          ];
                                                                                          return false;
                                                                                        }
                                                                                        var valid15 =
                                                                                          _errs147 === errors;
                                                                                      } else {
                                                                                        var valid15 = true;
                                                                                      }
                                                                                      if (valid15) {
                                                                                        if (
                                                                                          data70.temperatureC !==
                                                                                          undefined
                                                                                        ) {
                                                                                          let data81 =
                                                                                            data70.temperatureC;
                                                                                          const _errs149 = errors;
                                                                                          if (errors === _errs149) {
                                                                                            if (
                                                                                              typeof data81 == 'number'
                                                                                            ) {
                                                                                              if (
                                                                                                data81 > 50 ||
                                                                                                isNaN(data81)
                                                                                              ) {
                                                                                                validate10.errors = [
                                                                                                  {
                                                                                                    instancePath:
                                                                                                      instancePath +
                                                                                                      '/files/' +
                                                                                                      i1 +
                                                                                                      '/sweeps/' +
                                                                                                      i2 +
                                                                                                      '/temperatureC',
                                                                                                    schemaPath:
                                                                                                      '#/definitions/conditions/properties/temperatureC/maximum',
                                                                                                    keyword: 'maximum',
                                                                                                    params: {
                                                                                                      comparison: '<=',
                                                                                                      limit: 50,
                                                                                                    },
                                                                                                    message:
                                                                                                      'must be <= 50',
                                                                                                  },
                                                                                                ];
                                                                                                return false;
                                                                                              } else {
                                                                                                if (
                                                                                                  data81 < -5 ||
                                                                                                  isNaN(data81)
                                                                                                ) {
                                                                                                  validate10.errors = [
                                                                                                    {
                                                                                                      instancePath:
                                                                                                        instancePath +
                                                                                                        '/files/' +
                                                                                                        i1 +
                                                                                                        '/sweeps/' +
                                                                                                        i2 +
                                                                                                        '/temperatureC',
                                                                                                      schemaPath:
                                                                                                        '#/definitions/conditions/properties/temperatureC/minimum',
                                                                                                      keyword:
                                                                                                        'minimum',
                                                                                                      params: {
                                                                                                        comparison:
                                                                                                          '>=',
                                                                                                        limit: -5,
                                                                                                      },
                                                                                                      message:
                                                                                                        'must be >= -5',
                                                                                                    },
                                                                                                  ];
                                                                                                  return false;
                                                                                                }
                                                                                              }
                                                                                            } else {
                                                                                              validate10.errors = [
                                                                                                {
                                                                                                  instancePath:
                                                                                                    instancePath +
                                                                                                    '/files/' +
                                                                                                    i1 +
                                                                                                    '/sweeps/' +
                                                                                                    i2 +
                                                                                                    '/temperatureC',
                                                                                                  schemaPath:
                                                                                                    '#/definitions/conditions/properties/temperatureC/type',
                                                                                                  keyword: 'type',
                                                                                                  params: {
                                                                                                    type: 'number',
                                                                                                  },
                                                                                                  message:
                                                                                                    'must be number',
                                                                                                },
                                                                                              ];
                                                                                              return false;
                                                                                            }
                                                                                          }
                                                                                          var valid15 =
                                                                                            _errs149 === errors;
                                                                                        } else {
                                                                                          var valid15 = true;
                                                                                        }
                                                                                        if (valid15) {
                                                                                          if (
                                                                                            data70.acquiredS !==
                                                                                            undefined
                                                                                          ) {
                                                                                            const _errs151 = errors;
                                                                                            if (
                                                                                              !(
                                                                                                typeof data70.acquiredS ==
                                                                                                'number'
                                                                                              )
                                                                                            ) {
                                                                                              validate10.errors = [
                                                                                                {
                                                                                                  instancePath:
                                                                                                    instancePath +
                                                                                                    '/files/' +
                                                                                                    i1 +
                                                                                                    '/sweeps/' +
                                                                                                    i2 +
                                                                                                    '/acquiredS',
                                                                                                  schemaPath:
                                                                                                    '#/definitions/conditions/properties/acquiredS/type',
                                                                                                  keyword: 'type',
                                                                                                  params: {
                                                                                                    type: 'number',
                                                                                                  },
                                                                                                  message:
                                                                                                    'must be number',
                                                                                                },
                                                                                              ];
                                                                                              return false;
                                                                                            }
                                                                                            var valid15 =
                                                                                              _errs151 === errors;
                                                                                          } else {
                                                                                            var valid15 = true;
                                                                                          }
                                                                                          if (valid15) {
                                                                                            if (
                                                                                              data70.repeat !==
                                                                                              undefined
                                                                                            ) {
                                                                                              let data83 =
                                                                                                data70.repeat;
                                                                                              const _errs153 = errors;
                                                                                              if (!(
                                                                                                typeof data83 ==
                                                                                                  'number' &&
                                                                                                !(data83 % 1) &&
                                                                                                !isNaN(data83)
                                                                                              )) {
                                                                                                validate10.errors = [
                                                                                                  {
                                                                                                    instancePath:
                                                                                                      instancePath +
                                                                                                      '/files/' +
                                                                                                      i1 +
                                                                                                      '/sweeps/' +
                                                                                                      i2 +
                                                                                                      '/repeat',
                                                                                                    schemaPath:
                                                                                                      '#/definitions/conditions/properties/repeat/type',
                                                                                                    keyword: 'type',
                                                                                                    params: {
                                                                                                      type: 'integer',
                                                                                                    },
                                                                                                    message:
                                                                                                      'must be integer',
                                                                                                  },
                                                                                                ];
                                                                                                return false;
                                                                                              }
                                                                                              if (errors === _errs153) {
                                                                                                if (
                                                                                                  typeof data83 ==
                                                                                                  'number'
                                                                                                ) {
                                                                                                  if (
                                                                                                    data83 < 0 ||
                                                                                                    isNaN(data83)
                                                                                                  ) {
                                                                                                    validate10.errors =
                                                                                                      [
                                                                                                        {
                                                                                                          instancePath:
                                                                                                            instancePath +
                                                                                                            '/files/' +
                                                                                                            i1 +
                                                                                                            '/sweeps/' +
                                                                                                            i2 +
                                                                                                            '/repeat',
                                                                                                          schemaPath:
                                                                                                            '#/definitions/conditions/properties/repeat/minimum',
                                                                                                          keyword:
                                                                                                            'minimum',
                                                                                                          params: {
                                                                                                            comparison:
                                                                                                              '>=',
                                                                                                            limit: 0,
                                                                                                          },
                                                                                                          message:
                                                                                                            'must be >= 0',
                                                                                                        },
                                                                                                      ];
                                                                                                    return false;
                                                                                                  }
                                                                                                }
                                                                                              }
                                                                                              var valid15 =
                                                                                                _errs153 === errors;
                                                                                            } else {
                                                                                              var valid15 = true;
                                                                                            }
                                                                                            if (valid15) {
                                                                                              if (
                                                                                                data70.polarity !==
                                                                                                undefined
                                                                                              ) {
                                                                                                let data84 =
                                                                                                  data70.polarity;
                                                                                                const _errs155 = errors;
                                                                                                if (!(
                                                                                                  data84 === 1 ||
                                                                                                  data84 === -1
                                                                                                )) {
                                                                                                  validate10.errors = [
                                                                                                    {
                                                                                                      instancePath:
                                                                                                        instancePath +
                                                                                                        '/files/' +
                                                                                                        i1 +
                                                                                                        '/sweeps/' +
                                                                                                        i2 +
                                                                                                        '/polarity',
                                                                                                      schemaPath:
                                                                                                        '#/definitions/conditions/properties/polarity/enum',
                                                                                                      keyword: 'enum',
                                                                                                      params: {
                                                                                                        allowedValues:
                                                                                                          schema12
                                                                                                            .properties
                                                                                                            .polarity
                                                                                                            .enum,
                                                                                                      },
                                                                                                      message:
                                                                                                        'must be equal to one of the allowed values',
                                                                                                    },
                                                                                                  ];
                                                                                                  return false;
                                                                                                }
                                                                                                var valid15 =
                                                                                                  _errs155 === errors;
                                                                                              } else {
                                                                                                var valid15 = true;
                                                                                              }
                                                                                              if (valid15) {
                                                                                                if (
                                                                                                  data70.epoch !==
                                                                                                  undefined
                                                                                                ) {
                                                                                                  const _errs156 =
                                                                                                    errors;
                                                                                                  if (
                                                                                                    typeof data70.epoch !==
                                                                                                    'string'
                                                                                                  ) {
                                                                                                    validate10.errors =
                                                                                                      [
                                                                                                        {
                                                                                                          instancePath:
                                                                                                            instancePath +
                                                                                                            '/files/' +
                                                                                                            i1 +
                                                                                                            '/sweeps/' +
                                                                                                            i2 +
                                                                                                            '/epoch',
                                                                                                          schemaPath:
                                                                                                            '#/definitions/conditions/properties/epoch/type',
                                                                                                          keyword:
                                                                                                            'type',
                                                                                                          params: {
                                                                                                            type: 'string',
                                                                                                          },
                                                                                                          message:
                                                                                                            'must be string',
                                                                                                        },
                                                                                                      ];
                                                                                                    return false;
                                                                                                  }
                                                                                                  var valid15 =
                                                                                                    _errs156 === errors;
                                                                                                } else {
                                                                                                  var valid15 = true;
                                                                                                }
                                                                                                if (valid15) {
                                                                                                  if (
                                                                                                    data70.series !==
                                                                                                    undefined
                                                                                                  ) {
                                                                                                    let data86 =
                                                                                                      data70.series;
                                                                                                    const _errs158 =
                                                                                                      errors;
                                                                                                    if (!(
                                                                                                      data86 ===
                                                                                                        'intensity' ||
                                                                                                      data86 ===
                                                                                                        'distance' ||
                                                                                                      data86 ===
                                                                                                        'dose' ||
                                                                                                      data86 ===
                                                                                                        'temperature' ||
                                                                                                      data86 ===
                                                                                                        'pulse-width' ||
                                                                                                      data86 ===
                                                                                                        'paired-pulse' ||
                                                                                                      data86 ===
                                                                                                        'train' ||
                                                                                                      data86 === null
                                                                                                    )) {
                                                                                                      validate10.errors =
                                                                                                        [
                                                                                                          {
                                                                                                            instancePath:
                                                                                                              instancePath +
                                                                                                              '/files/' +
                                                                                                              i1 +
                                                                                                              '/sweeps/' +
                                                                                                              i2 +
                                                                                                              '/series',
                                                                                                            schemaPath:
                                                                                                              '#/definitions/conditions/properties/series/enum',
                                                                                                            keyword:
                                                                                                              'enum',
                                                                                                            params: {
                                                                                                              allowedValues:
                                                                                                                schema12
                                                                                                                  .properties
                                                                                                                  .series
                                                                                                                  .enum,
                                                                                                            },
                                                                                                            message:
                                                                                                              'must be equal to one of the allowed values',
                                                                                                          },
                                                                                                        ];
                                                                                                      return false;
                                                                                                    }
                                                                                                    var valid15 =
                                                                                                      _errs158 ===
                                                                                                      errors;
                                                                                                  } else {
                                                                                                    var valid15 = true;
                                                                                                  }
                                                                                                }
                                                                                              }
                                                                                            }
                                                                                          }
                                                                                        }
                                                                                      }
                                                                                    }
                                                                                  }
                                                                                }
                                                                              }
                                                                            }
                                                                          }
                                                                        }
                                                                      }
                                                                    }
                                                                  } else {
                                                                    validate10.errors = [
                                                                      {
                                                                        instancePath:
                                                                          instancePath +
                                                                          '/files/' +
                                                                          i1 +
                                                                          '/sweeps/' +
                                                                          i2,
                                                                        schemaPath: '#/definitions/conditions/type',
                                                                        keyword: 'type',
                                                                        params: { type: 'object' },
                                                                        message: 'must be object',
                                                                      },
                                                                    ];
                                                                    return false;
                                                                  }
                                                                }
                                                                var valid12 = _errs125 === errors;
                                                                if (!valid12) {
                                                                  break;
                                                                }
                                                              }
                                                            } else {
                                                              validate10.errors = [
                                                                {
                                                                  instancePath:
                                                                    instancePath + '/files/' + i1 + '/sweeps',
                                                                  schemaPath:
                                                                    '#/properties/files/items/properties/sweeps/type',
                                                                  keyword: 'type',
                                                                  params: { type: 'array' },
                                                                  message: 'must be array',
                                                                },
                                                              ];
                                                              return false;
                                                            }
                                                          }
                                                          var valid8 = _errs123 === errors;
                                                        } else {
                                                          var valid8 = true;
                                                        }
                                                      }
                                                    }
                                                  }
                                                }
                                              }
                                            }
                                          } else {
                                            validate10.errors = [
                                              {
                                                instancePath: instancePath + '/files/' + i1,
                                                schemaPath: '#/properties/files/items/type',
                                                keyword: 'type',
                                                params: { type: 'object' },
                                                message: 'must be object',
                                              },
                                            ];
                                            return false;
                                          }
                                        }
                                        var valid7 = _errs81 === errors;
                                        if (!valid7) {
                                          break;
                                        }
                                      }
                                    }
                                  } else {
                                    validate10.errors = [
                                      {
                                        instancePath: instancePath + '/files',
                                        schemaPath: '#/properties/files/type',
                                        keyword: 'type',
                                        params: { type: 'array' },
                                        message: 'must be array',
                                      },
                                    ];
                                    return false;
                                  }
                                }
                                var valid0 = _errs79 === errors;
                              } else {
                                var valid0 = true;
                              }
                            }
                          }
                        }
                      }
                    }
                  }
                }
              }
            }
          }
        }
      }
    } else {
      validate10.errors = [
        { instancePath, schemaPath: '#/type', keyword: 'type', params: { type: 'object' }, message: 'must be object' },
      ];
      return false;
    }
  }
  validate10.errors = vErrors;
  return errors === 0;
}
export default validate10;

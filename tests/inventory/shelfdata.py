"""Data of the shelf tests: a small catalogue (three motors, one gearhead) and a light envelope."""

# R = 1 ohm, Kt = 0.1 N*m/A, thermal data complete: every motor carries a light load easily.
MOTORS = """\
manufacturer,part_number,commutation,magnet_material,nominal_voltage [V],terminal_resistance [Ohm],resistance_reference_temperature [degC],torque_constant [N*m/A],no_load_current [A],rotor_inertia [g*cm^2],thermal_resistance_winding_housing [K/W],thermal_resistance_housing_ambient [K/W],thermal_time_constant_winding [s],thermal_time_constant_motor [s],max_winding_temperature [degC],max_speed [rpm],mass [g],diameter [mm],length [mm],mount
Shelf Test,HEAVY,brushed,ndfeb,24,1,25,0.1,0,10,3,7,20,600,155,9000,500,40,60,G40
Shelf Test,LIGHT,brushed,ndfeb,24,1,25,0.1,0,10,3,7,20,600,155,9000,200,40,60,G40
Shelf Test,MID,brushed,ndfeb,24,1,25,0.1,0,10,3,7,20,600,155,9000,300,40,60,G40
"""
GEARHEADS = """\
manufacturer,part_number,ratio,stages,efficiency,max_continuous_torque [N*m],max_intermittent_torque [N*m],max_input_speed [rpm],inertia [g*cm^2],mass [g],diameter [mm],length [mm],mount
Shelf Test,GH10,10,2,0.8,1.0,1.5,6000,0.001,100,40,30,G40
"""
ENVELOPE = """\
name = "light"
[supply]
nominal_voltage = "24 V"
[environment]
ambient_temperature = "25 degC"
[gearing]
direct = true
catalogue = true
[[points]]
name = "run"
torque = "0.05 N*m"
speed = "10 rad/s"
kind = "continuous"
[ranking]
keys = ["mass"]
{stock}
"""
HEAVY, LIGHT, MID, GEAR = "shelf-heavy", "shelf-light", "shelf-mid", "shelf-gh10"

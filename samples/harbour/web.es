Travesía 211: de Isla Garza a Punta Sal a las 16:30, solo los sábado, si el tiempo lo permite.
Travesía 143: de Los Arcos a Puerto Lindo a las 19:30, solo los sábado, si el tiempo lo permite.
Travesía 185: de Los Arcos a Cala Honda a las 15:45, solo los lunes, si el tiempo lo permite.
Travesía 158: de Isla Garza a Los Arcos a las 12:45, solo los viernes, si el tiempo lo permite.
La cafetería de la cubierta superior abre media hora después de la salida.
Los objetos perdidos se guardan en la taquilla durante treinta días.
Travesía 191: de Puerto Lindo a Cala Honda a las 8:15, solo los domingo, si el tiempo lo permite.
Travesía 198: de Los Arcos a Cala Honda a las 13:15, solo los jueves, si el tiempo lo permite.
Con viento fuerte pueden cancelarse las travesías de la mañana.
Travesía 175: de Los Arcos a Puerto Lindo a las 15:00, solo los sábado, si el tiempo lo permite.
Travesía 199: de Punta Sal a Cala Honda a las 10:45, solo los lunes, si el tiempo lo permite.
Travesía 122: de Punta Sal a Puerto Lindo a las 11:30, solo los domingo, si el tiempo lo permite.
Los ferris a Puerto Lindo llevan perros con correa sin coste adicional !
Travesía 118: de Punta Sal a Cala Honda a las 18:00, solo los miércoles, si el tiempo lo permite.
Travesía 215: de Isla Garza a Punta Sal a las 10:15, solo los sábado, si el tiempo lo permite.
Travesía 153: de Cala Honda a Los Arcos a las 18:00, solo los domingo, si el tiempo lo permite.
Travesía 166: de Isla Garza a Cala Honda a las 17:45, solo los sábado, si el tiempo lo permite.
Los billetes se pueden cambiar sin coste hasta una hora antes de la salida.
Travesía 126: de Cala Honda a Punta Sal a las 9:15, solo los miércoles, si el tiempo lo permite.
Travesía 119: de Los Arcos a Cala Honda a las 17:30, solo los viernes, si el tiempo lo permite.
Travesía 145: de Punta Sal a Cala Honda a las 13:00, solo los lunes, si el tiempo lo permite.
Travesía 187: de Cala Honda a Punta Sal a las 9:30, solo los domingo, si el tiempo lo permite.
Travesía 140: de Punta Sal a Los Arcos a las 6:45, solo los lunes, si el tiempo lo permite.
Los ferris a Puerto Lindo llevan kayaks sin coste adicional !
Travesía 111: de Los Arcos a Puerto Lindo a las 20:15, solo los sábado, si el tiempo lo permite.
Travesía 174: de Cala Honda a Punta Sal a las 19:00, solo los jueves, si el tiempo lo permite.
Travesía 223: de Punta Sal a Isla Garza a las 9:00, solo los miércoles, si el tiempo lo permite.
Aviso importante: Los ferris a Isla Garza llevan perros con correa sin coste adicional.
Travesía 112: de Punta Sal a Cala Honda a las 10:45, solo los lunes, si el tiempo lo permite.
Travesía 225: de Los Arcos a Cala Honda a las 8:30, solo los domingo, si el tiempo lo permite.
Travesía 167: de Punta Sal a Los Arcos a las 12:45, solo los lunes, si el tiempo lo permite.
Travesía 133: de Cala Honda a Los Arcos a las 9:45, solo los domingo, si el tiempo lo permite.
Travesía 124: de Los Arcos a Isla Garza a las 18:30, solo los jueves, si el tiempo lo permite.
Contact us
Travesía 154: de Cala Honda a Puerto Lindo a las 16:45, solo los lunes, si el tiempo lo permite.
Travesía 139: de Isla Garza a Los Arcos a las 15:00, solo los martes, si el tiempo lo permite.
Travesía 226: de Punta Sal a Isla Garza a las 12:30, solo los sábado, si el tiempo lo permite.
Travesía 117: de Puerto Lindo a Isla Garza a las 16:15, solo los jueves, si el tiempo lo permite.
Travesía 237: de Puerto Lindo a Isla Garza a las 11:00, solo los sábado, si el tiempo lo permite.
Home
Travesía 180: de Puerto Lindo a Cala Honda a las 15:45, solo los martes, si el tiempo lo permite.
Travesía 176: de Los Arcos a Isla Garza a las 16:30, solo los martes, si el tiempo lo permite.
Travesía 138: de Cala Honda a Puerto Lindo a las 6:45, solo los domingo, si el tiempo lo permite.
Travesía 205: de Puerto Lindo a Cala Honda a las 15:15, solo los miércoles, si el tiempo lo permite.
Travesía 181: de Isla Garza a Puerto Lindo a las 8:15, solo los sábado, si el tiempo lo permite.
Travesía 115: de Los Arcos a Cala Honda a las 10:00, solo los miércoles, si el tiempo lo permite.
Travesía 234: de Los Arcos a Cala Honda a las 17:30, solo los jueves, si el tiempo lo permite.
Travesía 195: de Puerto Lindo a Isla Garza a las 8:15, solo los sábado, si el tiempo lo permite.
Travesía 221: de Puerto Lindo a Isla Garza a las 17:15, solo los domingo, si el tiempo lo permite.
Travesía 164: de Cala Honda a Isla Garza a las 15:15, solo los domingo, si el tiempo lo permite.
Travesía 188: de Los Arcos a Cala Honda a las 15:30, solo los domingo, si el tiempo lo permite.
Travesía 232: de Cala Honda a Punta Sal a las 7:15, solo los viernes, si el tiempo lo permite.
Travesía 148: de Punta Sal a Cala Honda a las 18:00, solo los miércoles, si el tiempo lo permite.
Hay chalecos salvavidas debajo de cada asiento.
Travesía 120: de Puerto Lindo a Cala Honda a las 18:45, solo los sábado, si el tiempo lo permite.
Travesía 224: de Puerto Lindo a Los Arcos a las 9:45, solo los sábado, si el tiempo lo permite.
Travesía 216: de Los Arcos a Puerto Lindo a las 9:30, solo los miércoles, si el tiempo lo permite.
Travesía 106: de Isla Garza a Punta Sal a las 13:00, solo los miércoles, si el tiempo lo permite.
Travesía 155: de Los Arcos a Isla Garza a las 20:00, solo los lunes, si el tiempo lo permite.
Travesía 193: de Punta Sal a Isla Garza a las 14:30, solo los jueves, si el tiempo lo permite.
Travesía 184: de Cala Honda a Puerto Lindo a las 21:00, solo los lunes, si el tiempo lo permite.
Travesía 161: de Cala Honda a Puerto Lindo a las 19:45, solo los viernes, si el tiempo lo permite.
Travesía 202: de Cala Honda a Punta Sal a las 8:45, solo los jueves, si el tiempo lo permite.
Travesía 107: de Cala Honda a Los Arcos a las 17:45, solo los jueves, si el tiempo lo permite.
Travesía 214: de Los Arcos a Punta Sal a las 6:15, solo los viernes, si el tiempo lo permite.
Aviso importante: Los ferris a Isla Garza llevan carritos de bebé sin coste adicional.
Travesía 101: de Puerto Lindo a Cala Honda a las 7:15, solo los jueves, si el tiempo lo permite.
Travesía 134: de Isla Garza a Puerto Lindo a las 16:00, solo los jueves, si el tiempo lo permite.
Los ferris a Puerto Lindo llevan bicicletas sin coste adicional !
Travesía 160: de Isla Garza a Los Arcos a las 18:30, solo los viernes, si el tiempo lo permite.
Travesía 194: de Isla Garza a Cala Honda a las 9:45, solo los sábado, si el tiempo lo permite.
Travesía 157: de Cala Honda a Isla Garza a las 13:30, solo los domingo, si el tiempo lo permite.
Travesía 178: de Punta Sal a Puerto Lindo a las 16:15, solo los lunes, si el tiempo lo permite.
Travesía 113: de Isla Garza a Los Arcos a las 16:45, solo los jueves, si el tiempo lo permite.
Travesía 206: de Punta Sal a Cala Honda a las 12:45, solo los lunes, si el tiempo lo permite.
Travesía 152: de Puerto Lindo a Cala Honda a las 11:30, solo los lunes, si el tiempo lo permite.
Travesía 149: de Cala Honda a Punta Sal a las 17:45, solo los miércoles, si el tiempo lo permite.
Travesía 189: de Punta Sal a Los Arcos a las 14:00, solo los domingo, si el tiempo lo permite.
Travesía 192: de Cala Honda a Isla Garza a las 6:30, solo los lunes, si el tiempo lo permite.
Travesía 150: de Cala Honda a Punta Sal a las 7:15, solo los viernes, si el tiempo lo permite.
Travesía 231: de Isla Garza a Puerto Lindo a las 6:15, solo los viernes, si el tiempo lo permite.
Travesía 238: de Punta Sal a Puerto Lindo a las 6:45, solo los sábado, si el tiempo lo permite.
Travesía 203: de Puerto Lindo a Punta Sal a las 16:00, solo los lunes, si el tiempo lo permite.
Travesía 219: de Los Arcos a Punta Sal a las 17:30, solo los miércoles, si el tiempo lo permite.
Travesía 100: de Isla Garza a Cala Honda a las 10:15, solo los lunes, si el tiempo lo permite.
Travesía 186: de Isla Garza a Cala Honda a las 14:15, solo los miércoles, si el tiempo lo permite.
Travesía 110: de Punta Sal a Puerto Lindo a las 8:15, solo los lunes, si el tiempo lo permite.
Aviso importante: Los ferris a Isla Garza llevan tablas de surf sin coste adicional.
Travesía 173: de Puerto Lindo a Punta Sal a las 21:00, solo los miércoles, si el tiempo lo permite.
Travesía 227: de Cala Honda a Los Arcos a las 11:15, solo los martes, si el tiempo lo permite.
Travesía 208: de Los Arcos a Cala Honda a las 11:15, solo los jueves, si el tiempo lo permite.
Travesía 125: de Cala Honda a Puerto Lindo a las 7:00, solo los lunes, si el tiempo lo permite.
Travesía 171: de Puerto Lindo a Punta Sal a las 18:00, solo los miércoles, si el tiempo lo permite.
Travesía 163: de Cala Honda a Punta Sal a las 7:45, solo los domingo, si el tiempo lo permite.
Travesía 200: de Los Arcos a Punta Sal a las 18:30, solo los miércoles, si el tiempo lo permite.
Travesía 204: de Puerto Lindo a Cala Honda a las 13:45, solo los viernes, si el tiempo lo permite.
Travesía 239: de Punta Sal a Los Arcos a las 10:45, solo los viernes, si el tiempo lo permite.
Travesía 235: de Cala Honda a Puerto Lindo a las 12:00, solo los martes, si el tiempo lo permite.
Los ferris a Puerto Lindo llevan tablas de surf sin coste adicional !
Travesía 130: de Los Arcos a Isla Garza a las 15:30, solo los sábado, si el tiempo lo permite.
Travesía 228: de Los Arcos a Cala Honda a las 16:45, solo los viernes, si el tiempo lo permite.
Travesía 179: de Los Arcos a Puerto Lindo a las 15:30, solo los martes, si el tiempo lo permite.
Llegue al muelle veinte minutos antes de la salida de su ferry.
Book now
Travesía 156: de Punta Sal a Puerto Lindo a las 19:00, solo los lunes, si el tiempo lo permite.
Travesía 230: de Punta Sal a Los Arcos a las 11:15, solo los lunes, si el tiempo lo permite.
Travesía 170: de Puerto Lindo a Isla Garza a las 8:15, solo los sábado, si el tiempo lo permite.
Travesía 210: de Puerto Lindo a Los Arcos a las 18:30, solo los miércoles, si el tiempo lo permite.
Travesía 217: de Cala Honda a Punta Sal a las 10:00, solo los martes, si el tiempo lo permite.
Travesía 222: de Cala Honda a Puerto Lindo a las 10:00, solo los jueves, si el tiempo lo permite.
Travesía 190: de Los Arcos a Cala Honda a las 11:30, solo los viernes, si el tiempo lo permite.
Travesía 132: de Punta Sal a Puerto Lindo a las 6:00, solo los miércoles, si el tiempo lo permite.
Travesía 168: de Isla Garza a Puerto Lindo a las 16:15, solo los miércoles, si el tiempo lo permite.
Los ferris a Isla Garza llevan bicicletas sin coste adicional !
Travesía 114: de Los Arcos a Punta Sal a las 18:00, solo los sábado, si el tiempo lo permite.
Travesía 213: de Punta Sal a Cala Honda a las 21:45, solo los martes, si el tiempo lo permite.
Travesía 207: de Los Arcos a Punta Sal a las 11:15, solo los miércoles, si el tiempo lo permite.
Travesía 159: de Los Arcos a Punta Sal a las 13:15, solo los lunes, si el tiempo lo permite.
Travesía 236: de Cala Honda a Punta Sal a las 12:00, solo los martes, si el tiempo lo permite.
Travesía 218: de Isla Garza a Los Arcos a las 11:30, solo los lunes, si el tiempo lo permite.
Travesía 233: de Isla Garza a Cala Honda a las 12:30, solo los sábado, si el tiempo lo permite.
Travesía 108: de Cala Honda a Los Arcos a las 10:45, solo los jueves, si el tiempo lo permite.
Timetables
Travesía 136: de Isla Garza a Los Arcos a las 14:00, solo los viernes, si el tiempo lo permite.
Travesía 104: de Punta Sal a Puerto Lindo a las 10:45, solo los jueves, si el tiempo lo permite.
Travesía 129: de Cala Honda a Isla Garza a las 11:15, solo los martes, si el tiempo lo permite.
Travesía 116: de Punta Sal a Puerto Lindo a las 20:00, solo los jueves, si el tiempo lo permite.
Travesía 102: de Isla Garza a Puerto Lindo a las 8:30, solo los viernes, si el tiempo lo permite.
Los ferris a Puerto Lindo llevan carritos de bebé sin coste adicional !
Travesía 147: de Los Arcos a Puerto Lindo a las 17:00, solo los lunes, si el tiempo lo permite.
Travesía 131: de Cala Honda a Punta Sal a las 13:30, solo los lunes, si el tiempo lo permite.
Travesía 201: de Isla Garza a Puerto Lindo a las 18:15, solo los jueves, si el tiempo lo permite.
Travesía 141: de Puerto Lindo a Los Arcos a las 14:45, solo los sábado, si el tiempo lo permite.
Travesía 144: de Puerto Lindo a Isla Garza a las 12:00, solo los sábado, si el tiempo lo permite.
Travesía 142: de Isla Garza a Los Arcos a las 19:00, solo los martes, si el tiempo lo permite.
Travesía 103: de Cala Honda a Punta Sal a las 13:30, solo los jueves, si el tiempo lo permite.
Travesía 212: de Isla Garza a Los Arcos a las 8:00, solo los domingo, si el tiempo lo permite.
Travesía 121: de Puerto Lindo a Punta Sal a las 16:15, solo los miércoles, si el tiempo lo permite.
Travesía 135: de Los Arcos a Isla Garza a las 13:45, solo los miércoles, si el tiempo lo permite.
Aviso importante: Los ferris a Isla Garza llevan kayaks sin coste adicional.
Travesía 151: de Los Arcos a Isla Garza a las 10:00, solo los miércoles, si el tiempo lo permite.
Travesía 165: de Punta Sal a Los Arcos a las 19:45, solo los lunes, si el tiempo lo permite.
Travesía 196: de Los Arcos a Cala Honda a las 16:00, solo los viernes, si el tiempo lo permite.
Travesía 220: de Puerto Lindo a Isla Garza a las 19:00, solo los miércoles, si el tiempo lo permite.
Los niños menores de cuatro años viajan gratis con un adulto.
Travesía 105: de Isla Garza a Cala Honda a las 14:45, solo los martes, si el tiempo lo permite.
Travesía 183: de Isla Garza a Puerto Lindo a las 14:15, solo los lunes, si el tiempo lo permite.
Travesía 169: de Punta Sal a Isla Garza a las 21:15, solo los viernes, si el tiempo lo permite.
Travesía 182: de Los Arcos a Cala Honda a las 8:15, solo los lunes, si el tiempo lo permite.
Travesía 128: de Punta Sal a Los Arcos a las 15:00, solo los jueves, si el tiempo lo permite.
Travesía 109: de Puerto Lindo a Punta Sal a las 20:15, solo los martes, si el tiempo lo permite.
Travesía 172: de Isla Garza a Punta Sal a las 18:15, solo los lunes, si el tiempo lo permite.
Travesía 123: de Puerto Lindo a Isla Garza a las 19:00, solo los martes, si el tiempo lo permite.
Los coches deben aparcar en los carriles marcados antes de embarcar.
Travesía 209: de Los Arcos a Punta Sal a las 11:00, solo los martes, si el tiempo lo permite.
Travesía 162: de Isla Garza a Punta Sal a las 8:45, solo los jueves, si el tiempo lo permite.
Travesía 127: de Los Arcos a Punta Sal a las 6:45, solo los miércoles, si el tiempo lo permite.
Travesía 177: de Isla Garza a Cala Honda a las 12:00, solo los domingo, si el tiempo lo permite.
Travesía 146: de Punta Sal a Cala Honda a las 14:00, solo los sábado, si el tiempo lo permite.
Travesía 197: de Punta Sal a Cala Honda a las 15:45, solo los domingo, si el tiempo lo permite.
Travesía 229: de Los Arcos a Punta Sal a las 18:30, solo los domingo, si el tiempo lo permite.
Travesía 137: de Cala Honda a Isla Garza a las 12:00, solo los domingo, si el tiempo lo permite.

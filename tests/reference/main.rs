mod ice_halfar;
